"""Calorimeter simulator internals; import the public names from :mod:`calwork.simulate`."""
