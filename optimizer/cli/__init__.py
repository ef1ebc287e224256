"""The ``strainline`` command line: entry point and one module per command."""
