"""The command line: `tea` and its commands (argument parsing and printing only)."""
