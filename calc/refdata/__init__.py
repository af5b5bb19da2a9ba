"""Sourced reference data and what is computed from it: formulas and molar masses, ΔfH° and Hess's law,
enthalpies of solution, dilution (φ_L), solution properties, GHS cautions and the comparison with a reference."""
