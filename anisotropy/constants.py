"""Names and thresholds shared by every room of the package, written once.

Nothing here computes anything beyond the paths of the bundled demo files,
and this module imports nothing from the package, so every other module may
import it (it sits at the bottom of the layering checked by import-linter,
see ``pyproject.toml``). The command line reads its help texts from here
without loading the engine.
"""

from __future__ import annotations

from pathlib import Path

__all__ = ["AXES", "CHANNELS", "CHANNEL_INDEX", "MIN_SAMPLES", "PLANE_FORMS", "PITCH_FORMS",
           "DEMO_TABLE", "DEMO_CONFIG", "demo_paths"]

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

#: How a plane may be written (``anisotropy.check.parse_plane``), for messages and help.
PLANE_FORMS = ("DIPDIR/DIP (e.g. 150/70: dips 70 towards 150; 'dipdir:150/70' says so "
               "explicitly) or strike:STRIKE/DIP with the right-hand rule (e.g. strike:060/70: "
               "the plane dips to the right of the strike direction, so its dip direction is "
               "the strike + 90, here 150)")
#: How a pitch may be written (``anisotropy.check.parse_pitch``), for messages and help.
PITCH_FORMS = ("DEG, 0-180, measured in the plane from the strike direction (right-hand rule) "
               "down towards the dip direction (90 = straight down-dip); or DEG plus a compass "
               "side, 0-90, measured from the end of the strike line that points to that side "
               "(e.g. 40E, 35SW; the side must name one end of the strike line clearly)")


#: The bundled invented deposit's composites and batch config (``anisotropy demo``).
DEMO_TABLE = "fenwright_composites.csv"
DEMO_CONFIG = "demo_config.toml"


def demo_paths() -> dict:
    """Paths of the bundled invented deposit: composites, truth, demo config."""
    here = Path(__file__).resolve().parent / "data"
    return {"composites": here / DEMO_TABLE, "truth": here / "truth.json",
            "config": here / DEMO_CONFIG}
