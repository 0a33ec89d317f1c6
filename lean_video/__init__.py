"""lean_video: trunk lean, pelvic obliquity and hip load from a frontal walking video.

Pipeline stages, data flowing one way::

    video -> pose -> gait -> mechanics -> report      (store beside, cli on top)

No stage imports a later one. The library logs through :mod:`logging`; only
:mod:`lean_video.cli` prints.
"""

# Raise whenever results can change: every stored session, report and keypoint cache carries it.
__version__ = "0.2.5"

from lean_video.errors import LeanVideoError

__all__ = ["LeanVideoError", "__version__"]
