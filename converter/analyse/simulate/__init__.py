"""Monte Carlo simulation over the array passes: sampling, correlation, runs, ranks."""
