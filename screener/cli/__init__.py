"""Command line: thin shell over the engine."""
