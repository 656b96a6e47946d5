"""Tests of ``sweep.check``, one file per module of the package."""
