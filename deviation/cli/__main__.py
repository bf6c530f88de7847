"""``python -m deviation.cli``: the command line."""

from .common import main

main()
