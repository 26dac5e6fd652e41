"""Command line: argument parsing, terminal tables, reports, exit codes."""
