"""Command line: thin commands over the library, one module per command group."""
