"""Measured Raman spectra: reading, cleaning, band fitting and depolarization ratios."""
