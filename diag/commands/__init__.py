"""One module per command: ``register(subparsers)`` adds the parser and sets ``func`` to the handler."""
