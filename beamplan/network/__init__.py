"""The beam-transport network: nodes with their behaviour, links, graph checks."""
