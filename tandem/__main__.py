"""``python -m tandem …``: the same command line as ``tandem``."""
from .cli import main

main()
