"""The ``beamplan`` command line: the only layer that prints or exits."""
