"""Numba kernels: pure computation, seed material in, preallocated outputs out.

:data:`STREAM_VERSION` names the numbers they produce for given seeds; stores record it
and resume only with the same version (``sweep/store.py``).
"""

#: Version of the random streams: which numbers a sweep's seeds give. Bump it with
#: every change that alters the numbers produced for the same seeds (the generator,
#: the order or number of draws, the arithmetic of a step), and only then: such a
#: change fails the golden test (tests/kernels/test_golden.py), whose pinned outputs
#: are then renewed with the bump and a CHANGELOG.md entry. Stores of another version
#: are refused on resume (mixing two streams in one sample); edits that keep every
#: number (comments, refactors, speed-ups checked bit for bit) keep the version, so
#: stores stay resumable.
#:
#: 1. Draws through numpy's ``Generator(SFC64)`` bit generator (stores made before the
#:    version was recorded; they carry a kernel-source fingerprint instead).
#: 2. SFC64 kept in local variables (kernels/rng.py), same seeding; the bridge's
#:    hitting time uses numpy 2.3.4's rationalised inverse-Gaussian formula.
STREAM_VERSION = 2
