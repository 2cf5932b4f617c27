"""Subcommands of the command line: each module has ``run(args) -> int`` and does its own printing."""
