"""Statistics of weighted samples: quantiles, intervals, diagnostics, summaries.

Nothing here knows about cosmology; every function takes plain arrays.
"""
