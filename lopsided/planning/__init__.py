"""What to run: the suite file, the resampling protocol and the plan of cells it expands to."""
