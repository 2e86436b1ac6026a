"""Figures (matplotlib only; no plotting code lives elsewhere in lenswork)."""
