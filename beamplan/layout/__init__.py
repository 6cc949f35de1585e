"""Layout files: the YAML format, its schema, loading with positions, the frozen model."""
