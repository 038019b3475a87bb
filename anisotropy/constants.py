"""Names and thresholds shared by every room of the package, written once.

Nothing here computes anything, and this module imports nothing from the
package, so every other module may import it (it sits at the bottom of the
layering checked by import-linter, see ``pyproject.toml``).
"""

from __future__ import annotations

__all__ = ["AXES", "CHANNELS", "CHANNEL_INDEX", "MIN_SAMPLES"]

#: The ellipsoid axes, in the order of the frame's columns (design.md, result schema).
AXES = ("major", "semi_major", "minor")

#: The pair engine's sum channels, in the order of the last axis of every sum
#: array (``anisotropy.pairs``): pair count, summed distance, squared, absolute
#: and square-root absolute differences, head and tail values, their squares
#: and cross product, the pairwise-relative sums and their count, and the
#: summed lag vector.
CHANNELS = ("count", "dist", "sq", "abs", "sqrt", "head", "tail", "head2", "tail2",
            "cross", "rel", "rel_n", "dx", "dy", "dz")

#: Position of each channel on the last axis.
CHANNEL_INDEX = {name: i for i, name in enumerate(CHANNELS)}

#: Fewest samples a domain needs before a 3D continuity model is attempted
#: (common practice: a few hundred pairs per lag need at least ~30-50 samples;
#: below 30 it is noise).
MIN_SAMPLES = 30
