"""The local process pool: jobs run in fresh processes, each with one math-library thread."""

from __future__ import annotations

import os

from axibore.study.runner import executor


def _thread_settings(_item):
    return {k: os.environ.get(k) for k in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")}, os.getpid()


def test_workers_get_one_math_thread_and_the_parent_keeps_its_own(monkeypatch):
    # Two workers with the libraries' default threads each oversubscribe two cores (measured in
    # scripts/bench_uncertainty.py); a user's own setting is kept.
    for k in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS"):
        monkeypatch.delenv(k, raising=False)
    monkeypatch.setenv("MKL_NUM_THREADS", "3")
    with executor(workers=2) as ex:
        out = [r for _, r, err in ex.run(_thread_settings, range(2)) if err is None]
    assert len(out) == 2
    for settings, pid in out:
        assert pid != os.getpid()
        assert settings == {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "3"}
    assert "OMP_NUM_THREADS" not in os.environ and "OPENBLAS_NUM_THREADS" not in os.environ
