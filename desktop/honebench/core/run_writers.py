"""Who is writing a grade run, and whether that process still lives.

A grade run is saved with status "running" when it starts and gets its final status when it
ends. A process killed in between (power cut, kill -9, a crash) leaves "running" behind for
good. To tell such a run from one that another live process is still writing (the CLI
grading while the window opens the same project), every run records its writer: process id,
host name and, where the system says, the process's start time (so a process id reused by a
later, unrelated process is not taken for the writer).

A writer on another host cannot be checked from here; its runs are left alone.
"""
from __future__ import annotations

import json
import os
import socket
import sys


def _proc_stat(pid: int) -> tuple[str, int] | None:
    """(state, start time in clock ticks since boot) from /proc, or None where there is no
    /proc (not Linux) or no such process."""
    try:
        with open(f"/proc/{pid}/stat", "rb") as f:
            raw = f.read().decode("ascii", "replace")
    except OSError:
        return None
    # The command name (field 2) is in parentheses and may hold spaces or ")": split after
    # the last ")". Then field 3 is the state and field 22 the start time (proc(5)).
    rest = raw[raw.rfind(")") + 2:].split()
    try:
        return rest[0], int(rest[19])
    except (IndexError, ValueError):
        return None


def this_writer() -> dict:
    """The identity of the current process, as saved with a run it starts."""
    stat = _proc_stat(os.getpid())
    writer = {"pid": os.getpid(), "host": socket.gethostname()}
    if stat is not None:
        writer["since"] = stat[1]
    return writer


def _pid_exists(pid: int) -> bool:
    if sys.platform == "win32":  # os.kill(pid, 0) would end the process there
        import ctypes

        handle = ctypes.windll.kernel32.OpenProcess(0x1000, False, pid)  # query limited info
        if not handle:
            return False
        ctypes.windll.kernel32.CloseHandle(handle)
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # exists, owned by someone else
        return True
    except OSError:
        return False
    return True


def may_be_running(writer: dict | None) -> bool:
    """False when the run's writer is certainly gone: no writer was recorded (runs from
    before writers were recorded), or the writer was on this host and its process has
    ended (or its process id now belongs to another process). True otherwise, including
    for a writer on another host, which cannot be checked from here."""
    if not isinstance(writer, dict):
        return False
    pid = writer.get("pid")
    if not isinstance(pid, int) or pid <= 0:
        return False
    if writer.get("host") != socket.gethostname():
        return True
    if pid == os.getpid():
        return True
    if not _pid_exists(pid):
        return False
    stat = _proc_stat(pid)
    if stat is None:
        return True  # no /proc: the process id exists, so assume it is the writer
    state, since = stat
    if state in ("Z", "X"):  # a zombie or dead process that has not been reaped yet
        return False
    recorded = writer.get("since")
    return not isinstance(recorded, int) or recorded == since


def stale_run_ids(rows) -> list[int]:
    """Ids of the (id, params JSON) rows of running runs whose writer is certainly gone."""
    stale = []
    for run_id, params in rows:
        try:
            writer = json.loads(params).get("writer")
        except (TypeError, ValueError, AttributeError):
            writer = None
        if not may_be_running(writer):
            stale.append(run_id)
    return stale
