"""``python -m lagsheet``: the same command as ``lagsheet``."""

from .cli import main

main()
