"""`python -m pactlang` -> the command line."""

from .cli import main

main()
