"""Kept for imports of ``hamcheck.suite``: the runner lives in :mod:`hamcheck.checks.run`.

>>> from hamcheck.suite import check, Settings
>>> Settings().max_batch
1
"""

from .checks.run import FAST_COMPILE, Settings, check, replay_command

__all__ = ["check", "Settings", "replay_command", "FAST_COMPILE"]
