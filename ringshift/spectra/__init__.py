"""Observed spectra: peaks, picking and integration, solvent and reference lines."""
