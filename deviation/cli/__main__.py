"""``python -m deviation.cli``: the command line."""

from . import main

main()
