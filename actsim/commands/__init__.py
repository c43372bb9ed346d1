"""Command-line verbs for the jobs on top of the simulator; each module has ``register(subparsers)``."""
