"""While the Monte Carlo workers run, the BLAS library keeps to one thread of its own
(``_montecarlo._blas_on_one_thread``, through threadpoolctl), and the caller's setting
comes back afterwards. Read through threadpoolctl's own report of the loaded libraries."""

from __future__ import annotations

from contextlib import contextmanager

import pytest
from threadpoolctl import threadpool_info

from budget import _montecarlo as montecarlo
from budget._model import parse_model
from budget._montecarlo import simulate


def _blas_threads() -> list[int]:
    return [lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"]


def test_blas_runs_on_one_thread_while_several_workers_run_and_is_restored():
    before = _blas_threads()
    if not before:
        pytest.skip("threadpoolctl finds no BLAS library in this numpy")
    with montecarlo._blas_on_one_thread(2):
        assert _blas_threads() == [1] * len(before)
    assert _blas_threads() == before
    with montecarlo._blas_on_one_thread(1):  # one worker: BLAS may use its threads
        assert _blas_threads() == before


def test_simulate_on_two_workers_runs_under_the_limit(monkeypatch):
    seen: list[int] = []

    @contextmanager
    def recording(workers: int):
        seen.append(workers)
        yield

    monkeypatch.setattr(montecarlo, "_blas_on_one_thread", recording)
    model = parse_model('title = "t"\n[measurands.Y]\nequation = "a + b"\n'
                        "[inputs.a]\nvalue = 1\nu = 0.1\n[inputs.b]\nvalue = 2\nu = 0.1\n"
                        '[[correlations]]\nbetween = ["a", "b"]\nr = 0.3\n')
    simulate(model, trials=10_000, seed=1, workers=2)
    simulate(model, trials=10_000, seed=1, workers=1)
    assert seen == [2, 1]
