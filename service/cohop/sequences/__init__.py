"""Hopping sequences: families, construction, analysis and sequence-driven prediction."""
