"""``python -m soacheck``: the same command as the ``soacheck`` console script."""

from soacheck.cli import main

main()
