"""railroom engine: pure numeric core (no printing, no UI imports)."""
