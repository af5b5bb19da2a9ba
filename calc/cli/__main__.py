"""``python -m calc.cli``: the ``cupcal`` command."""

from calc.cli.main import main

main()
