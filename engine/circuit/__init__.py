"""The circuit: the chain model, the op-amp model, part limits and the block catalogue."""
