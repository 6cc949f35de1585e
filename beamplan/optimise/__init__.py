"""The allocation LP: build it once from a network, solve goals, verified results."""
