"""Shim for a checkout: ``python cli.py …`` runs the command line that lives in tandem/cli.py."""
from tandem.cli import app, main  # noqa: F401

if __name__ == "__main__":
    main()
