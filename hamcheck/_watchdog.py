"""A time limit for work done in this process (a file's import, a model's check).

Used by ``hamcheck check`` without ``--isolate``, where a file that never finishes
must cost one row of the summary, not the whole run.
"""

from __future__ import annotations

import contextlib
import os
import signal
import sys
import threading

__all__ = ["HARD_STOP_GRACE", "TimeLimitReached", "time_limit"]


class TimeLimitReached(BaseException):
    """Raised inside a file's import or a model's check when its time limit is reached.

    A BaseException, so that a user's ``except Exception`` cannot swallow it.
    """

    def __init__(self, what: str, seconds: float):
        self.reason = f"time limit of {seconds:g} s reached while {what.split(': ', 1)[-1]}"
        super().__init__(f"{what.split(': ', 1)[0]}: {self.reason}; replay it with --isolate to see it alone")


@contextlib.contextmanager
def time_limit(seconds, what: str):
    """Interrupt the body after ``seconds`` of wall time (SIGALRM; main thread on POSIX only).

    Python code (a user's loop at import or in a function being traced) is interrupted at
    once. Compiled code returns to Python before the signal is seen; for a hang inside
    compiled code a second watchdog ends the process after a grace period with one line
    naming the model (exit 1: that file failed), since only ``--isolate`` can kill it.
    Outside the main thread, or without SIGALRM, the body runs without a limit.
    """
    if not seconds or seconds <= 0 or threading.current_thread() is not threading.main_thread() \
            or not hasattr(signal, "setitimer"):
        yield
        return

    def on_alarm(signum, frame):
        raise TimeLimitReached(what, seconds)

    def hard_stop():
        sys.stderr.write(f"hamcheck: {what.split(': ', 1)[0]}: still running {HARD_STOP_GRACE:g} s after its "
                         f"time limit of {seconds:g} s (inside compiled code); stopping. Use --isolate to "
                         "check such files in their own processes.\n")
        sys.stderr.flush()
        os._exit(1)

    previous = signal.signal(signal.SIGALRM, on_alarm)
    guard = threading.Timer(seconds + HARD_STOP_GRACE, hard_stop)
    guard.daemon = True
    signal.setitimer(signal.ITIMER_REAL, seconds)
    guard.start()
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        guard.cancel()
        signal.signal(signal.SIGALRM, previous)


#: Seconds past a time limit before a run stuck inside compiled code is ended.
HARD_STOP_GRACE = 60.0
