"""A physics simulator of runs whose true answer is known (tests, benchmarks and the invented demo lab)."""
