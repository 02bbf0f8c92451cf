"""The ``calwork`` command line (see :mod:`calwork.cli.main`)."""
