"""The compiled kernels called from several threads at once, under every threading layer numba
may fall back to.

numba's documentation ("The Threading Layers") says only ``tbb`` and ``omp`` are threadsafe;
``workqueue``, the layer numba uses when neither OpenMP nor TBB is installed, aborts the process
("Concurrent access has been detected") when two threads launch a parallel kernel together. The
kernels serialise their launches under it; this test forces that layer in a fresh process.
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

#: Four threads, each launching both kernels several times on its own data; every result is
#: compared with NumPy's arithmetic of the same fields (the reference the kernels are held to).
WORKER = r"""
import threading
import numba
import numpy as np
from deviation.physics import field

rng = np.random.default_rng(7)
errors, results = [], {}

def work(i):
    try:
        local = np.random.default_rng(i)
        start = local.uniform(-1, 1, (300, 3))
        end = start + local.normal(size=(300, 3)) * 0.3
        points = local.uniform(2, 3, (400, 3))
        current = local.uniform(-5, 5, (300, 2))
        group = np.sort(local.integers(0, 5, 300))
        for _ in range(5):
            compiled = field.segment_field(start, end, current, points, backend="compiled")
            reference = field.segment_field(start, end, current, points, backend="numpy")
            by_group, _ = field.segment_field_by_group(start, end, current[:, 0], group, 5,
                                                       points, backend="compiled")
            by_group_ref, _ = field.segment_field_by_group(start, end, current[:, 0], group, 5,
                                                           points, backend="numpy")
        results[i] = (float(np.max(np.abs(compiled - reference)) / np.max(np.abs(reference))),
                      float(np.max(np.abs(by_group - by_group_ref)) / np.max(np.abs(by_group_ref))))
    except Exception as error:
        errors.append(repr(error))

threads = [threading.Thread(target=work, args=(i,)) for i in range(4)]
for t in threads:
    t.start()
for t in threads:
    t.join()
print(numba.threading_layer(), len(results), max(max(r) for r in results.values()), errors)
"""


@pytest.mark.compiled
@pytest.mark.slow
@pytest.mark.parametrize("layer", ["workqueue", "default"])
def test_kernels_from_four_threads_match_numpy_under_any_threading_layer(layer):
    env = dict(os.environ)
    if layer != "default":
        env["NUMBA_THREADING_LAYER"] = layer
    done = subprocess.run([sys.executable, "-c", WORKER], capture_output=True, text=True,
                          env=env, timeout=600)
    # Without the serialised launch, workqueue aborts the process (SIGABRT, status -6).
    assert done.returncode == 0, done.stderr[-2000:]
    chosen, finished, worst, errors = done.stdout.split(maxsplit=3)
    if layer != "default":
        assert chosen == layer
    assert int(finished) == 4 and errors.strip() == "[]"
    assert float(worst) < 1e-12                          # same arithmetic, rounding apart
