"""Expansion history: densities, E(a), cosmic and lookback times, distances (no I/O)."""
