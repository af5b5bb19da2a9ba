"""The ``cupcal`` command line."""
