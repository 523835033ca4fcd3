"""The command line: a typer app over the jobs (parse, call, render; no physics here)."""

from tandem.cli.app import app, main

__all__ = ["app", "main"]
