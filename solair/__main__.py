"""Allow ``python -m solair``."""

from solair.cli import main

main()
