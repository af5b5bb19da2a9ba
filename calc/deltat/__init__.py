"""Corrected temperature change: periods of the log, drift fits and the corrected-ΔT methods."""
