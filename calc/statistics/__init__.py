"""Statistics of many runs: class precision and outliers, replicate series, control charts."""
