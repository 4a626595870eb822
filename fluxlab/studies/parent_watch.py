"""End a worker process when the process that started it dies.

A worker of a process pool blocks on its task queue, whose pipe it holds open itself, so
it never notices that its parent was killed (SIGKILL, out-of-memory kill, closed
terminal): it would wait forever, holding its memory. :func:`end_with_parent`, called
first thing in a worker, prevents that:

* On Linux it asks the kernel for a parent-death signal (``prctl(PR_SET_PDEATHSIG,
  SIGKILL)``): the worker is killed the moment its parent ends. The parent may have died
  before the request, so the parent pid is checked right after it.
* Elsewhere, if ``prctl`` is unavailable, or when the worker was started from a thread
  other than the main one (Linux sends the signal when the *thread* that created the child
  ends, which may be long before its process does), a daemon thread checks about once a
  second whether the parent is still there and ends the worker with ``os._exit`` when it
  is not.

The parent passes its identity with :func:`parent_identity`, evaluated in the parent (for a
pool: in the ``initargs``). Only the standard library is imported, so a freshly spawned
worker pays nothing for this before its initializer's real work.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import multiprocessing
import os
import signal
import sys
import threading
import time

__all__ = ["PR_SET_PDEATHSIG", "ORPHAN_EXIT_CODE", "parent_identity", "end_with_parent"]

#: ``prctl`` option number of the parent-death signal (linux/prctl.h).
PR_SET_PDEATHSIG = 1
#: Exit status of a worker ended by the polling watch (the signal ends it by SIGKILL).
ORPHAN_EXIT_CODE = 75


def parent_identity() -> tuple[int, bool]:
    """What a child needs to watch this process: (its pid, whether this is the main thread).

    Call it in the parent, in the thread that starts the children (for a
    ``ProcessPoolExecutor``: the thread that submits, which spawns the workers).
    """
    return os.getpid(), threading.current_thread() is threading.main_thread()


def _parent_gone(parent_pid: int) -> bool:
    """Whether the process ``parent_pid`` is no longer this process's parent.

    On POSIX an orphan is re-parented, so its parent pid changes. Windows keeps the old
    pid, so there a multiprocessing child also asks its parent's sentinel.
    """
    if os.getppid() != parent_pid:
        return True
    parent = multiprocessing.parent_process()
    return parent is not None and parent.pid == parent_pid and not parent.is_alive()


def _set_death_signal(sig: int) -> bool:
    """Ask Linux to send ``sig`` to this process when its parent thread ends; True if done."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or None, use_errno=True)
        return libc.prctl(PR_SET_PDEATHSIG, int(sig), 0, 0, 0) == 0
    except (OSError, AttributeError):  # no libc, or a libc without prctl
        return False


def _watch(parent_pid: int, poll_s: float) -> None:
    while not _parent_gone(parent_pid):
        time.sleep(poll_s)
    os._exit(ORPHAN_EXIT_CODE)  # no clean-up: nobody is left to receive results


def end_with_parent(parent_pid: int, started_by_main_thread: bool = True,
                    poll_s: float = 1.0) -> str:
    """Make this process end when its parent ``parent_pid`` ends; returns the mechanism.

    Call it at the start of a child process (a pool's worker initializer, a forked child)
    with the values of :func:`parent_identity` taken in the parent. ``parent_pid`` must be
    the child's direct parent (``spawn`` and ``fork`` start methods, not ``forkserver``).

    Returns ``"signal"`` when Linux will send SIGKILL at the parent's death, ``"poll"``
    when a daemon thread checks every ``poll_s`` seconds instead (other systems, no
    ``prctl``, or a child started from another thread than the parent's main thread: the
    signal would follow that thread's end, not the process's). If the parent is already
    gone, the process ends at once with ``os._exit``.
    """
    if started_by_main_thread and _set_death_signal(signal.SIGKILL):
        mechanism = "signal"
    else:
        threading.Thread(target=_watch, args=(parent_pid, poll_s), daemon=True,
                         name="fluxlab-parent-watch").start()
        mechanism = "poll"
    if _parent_gone(parent_pid):  # it died before the signal was requested
        os._exit(ORPHAN_EXIT_CODE)
    return mechanism
