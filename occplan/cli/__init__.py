"""Command line: one module per command, each with ``register(app)``; see main.py."""
