"""Physics models for beamplan: pure functions in SI units."""
