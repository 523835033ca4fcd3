"""Shim for a checkout: ``python cli.py …`` runs the command line of tandem/cli/."""
from tandem.cli import app, main  # noqa: F401

if __name__ == "__main__":
    main()
