"""Uncertainty evaluation: the measurement model of each run kind, GUM propagation and the Monte Carlo check."""
