"""Sampling to convergence, exact grids, diagnostics and calibration."""
