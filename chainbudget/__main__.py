"""``python -m chainbudget``."""

from chainbudget.cli import main

main()
