"""`shoalcast` sub-commands, one module per command group; each has `register(subparsers)`."""
