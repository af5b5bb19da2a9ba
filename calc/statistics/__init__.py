"""Statistics of many runs, on plain numbers in one unit; one module a question:

- ``precision``: a class or inter-group study: Grubbs outliers, ISO 5725-2 precision, Mandel's h and k;
- ``cochran_test``: Cochran's test for the largest within-group variance (ISO 5725-2);
- ``robust``: ISO 13528 Algorithm A, a robust mean and standard deviation;
- ``replicates``: a series of repeat runs: mean, Type A and shared Type B uncertainty, Birge ratio;
- ``control_charts``: check-standard runs on an individuals chart, its run rules, calibration due dates;
- ``calibration_pool``: repeat calibrations of one calorimeter pooled into the heat capacity in force.
"""
