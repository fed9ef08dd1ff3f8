"""The ``slopescreen`` shell: one module per command, shared options in options.py."""
