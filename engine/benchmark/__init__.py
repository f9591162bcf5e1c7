"""The bench: figures for `railroom bench` and its slow one-circuit-at-a-time reference."""
