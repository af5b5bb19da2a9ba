"""``python -m calc.cli``: the ``cupcal`` command."""

from calc.cli.commands import main

main()
