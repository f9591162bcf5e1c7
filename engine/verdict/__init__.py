"""The verdict: each check's margin formula, the one judge, and the result types."""
