"""Simulated sample runs bundled with calwork (package data for ``calwork demo``).

Every file here was made with calwork's own simulator for a fictional laboratory and is
labelled as simulated; see ``README.md`` in this folder and :mod:`calwork.sample_runs.build`.
"""
