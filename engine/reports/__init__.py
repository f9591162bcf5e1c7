"""Reports: JSON, Markdown, JUnit, the level picture, side-by-side comparison, block help."""
