"""Tests of ``sweep.analytic``, one file per module of the package."""
