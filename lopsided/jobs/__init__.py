"""The user's jobs, one module per command: run, try, rank, the CI gate and result bundles."""
