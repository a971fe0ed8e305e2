"""The calculation report: design basis, results, worked calculations and plots of a plan."""
