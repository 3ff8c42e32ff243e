"""Run the command line: ``python -m amort``."""

from amort.cli import main

main()
