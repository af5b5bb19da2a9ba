"""Statistics of many runs, on plain numbers in one unit; one module a question:

- ``precision``: a class or inter-group study: outliers, ISO 5725-2 precision, ISO 13528 Algorithm A;
- ``replicates``: a series of repeat runs: mean, Type A and shared Type B uncertainty, Birge ratio;
- ``control_charts``: check-standard runs on an individuals chart, its run rules, calibration due dates;
- ``calibration_pool``: repeat calibrations of one calorimeter pooled into the heat capacity in force.
"""
