"""Timing and memory for the benchmarks: CPU time (the machine is shared, so wall time says
more about the neighbours than about the code), medians of repeats, peak memory, the load."""

from __future__ import annotations

import os
import resource
import selectors
import statistics
import time
import tracemalloc


def load() -> str:
    """The 1-minute load average and the cores, to print beside every figure."""
    return f"load {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores"


def timed(function, repeat=3):
    """(median CPU seconds of this process, median wall seconds, last result) over ``repeat``
    calls. CPU time counts every thread (a kernel on two cores counts twice its wall time)."""
    cpu, wall = [], []
    result = None
    for _ in range(repeat):
        c0, w0 = time.process_time(), time.perf_counter()
        result = function()
        cpu.append(time.process_time() - c0)
        wall.append(time.perf_counter() - w0)
    return statistics.median(cpu), statistics.median(wall), result


def traced(function):
    """(peak MB of Python and NumPy allocations during one call, result), by tracemalloc."""
    tracemalloc.start()
    try:
        result = function()
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    return peak / 2**20, result


def peak_rss_mb() -> float:
    """This process's peak resident memory so far [MB] (Linux reports KiB)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def run_child(command, env=None):
    """Run a command; (CPU seconds, wall seconds, peak resident MB, exit status, stdout,
    stderr) of that child alone, from os.wait4."""
    w0 = time.perf_counter()
    out_r, out_w = os.pipe()
    err_r, err_w = os.pipe()
    pid = os.fork()
    if pid == 0:                                     # the child: the command, its output piped
        os.close(out_r)
        os.close(err_r)
        os.dup2(out_w, 1)
        os.dup2(err_w, 2)
        try:
            os.execvpe(command[0], command, env if env is not None else os.environ)
        finally:
            os._exit(127)
    os.close(out_w)
    os.close(err_w)
    chunks = {out_r: [], err_r: []}
    selector = selectors.DefaultSelector()
    for fd in chunks:
        selector.register(fd, selectors.EVENT_READ)
    open_fds = set(chunks)
    while open_fds:
        for key, _ in selector.select():
            data = os.read(key.fd, 65536)
            if data:
                chunks[key.fd].append(data)
            else:
                selector.unregister(key.fd)
                os.close(key.fd)
                open_fds.discard(key.fd)
    _, status, usage = os.wait4(pid, 0)
    wall = time.perf_counter() - w0
    code = os.waitstatus_to_exitcode(status)
    return (usage.ru_utime + usage.ru_stime, wall, usage.ru_maxrss / 1024, code,
            b"".join(chunks[out_r]).decode(), b"".join(chunks[err_r]).decode())
