"""`python -m selector.cli` runs the dropper command line."""

from . import main

main()
