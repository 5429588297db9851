"""``hamcheck.cocycles`` is :mod:`hamcheck.circle.cocycles` (the cocycle checks moved into the circle toolkit)."""

from .circle.cocycles import *  # noqa: F401,F403
from .circle.cocycles import __all__  # noqa: F401
