"""Tests of ``sweep.analytic``, one file per module of the package.

Every check names its source beside it (the sheet's section id and citation status, or
the independent computation); the sheet is ``docs/analytic-reference.md``, and
:mod:`tests.analytic.sheet` holds its parameter set P.
"""
