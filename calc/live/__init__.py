"""Live runs: recording a thermometer as it reads, and advising while it records (docs/recording.md)."""
