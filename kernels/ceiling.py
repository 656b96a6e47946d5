"""The speed limit of a walker kernel: drawing d standard normals per walker-step.

Used by ``sweep bench`` as the denominator of throughput ratios. The function lives in
``kernels/walkers.py`` beside the normal sampler the kernel uses (numba's on-disk cache
does not notice edits to helpers in other files); the d draws of one step are
independent, like a kernel's axis loop, so they can overlap in the pipeline.
"""

from __future__ import annotations

from kernels.walkers import draw_normals

__all__ = ["draw_normals"]
