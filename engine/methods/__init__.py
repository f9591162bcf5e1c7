"""Methods: corners (extreme values), rss (root-sum-square), montecarlo. Same input, same result shape."""
from __future__ import annotations


def run_statistical(method: str, chain, plans, freqs, corner_stages):
    """Hook for the statistical methods; returns (stage results, chain yield)."""
    raise NotImplementedError(f"method {method!r} is not built yet")
