"""`python -m appendix` runs the command line."""

from appendix.cli import console

console()
