"""Figures and a one-page report from a chaosweep archive (used by scripts/plot-archive)."""
