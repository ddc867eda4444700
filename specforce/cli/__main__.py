"""``python -m specforce.cli``: the command line without the installed script."""

from . import main

main()
