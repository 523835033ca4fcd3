"""``python -m tandem …``: the same command line as ``tandem``."""
from tandem.cli import main

main()
