"""The compiled draws (budget/_compiled_draws.py, numba) give the numbers numpy's path gives.

Sources:
* numpy's own SFC64 bit generator (``random_raw``, ``Generator.random``): the stream the
  compiled loop computes word for word, and the uniform numbers it must reproduce (a
  general-purpose reference library).
* The numpy path of ``_ziggurat.standard_normal``, itself checked against the published
  method and scipy in tests/test_ziggurat.py: the compiled fast path must give its numbers
  to the last bit, for every way of scaling and cutting a fill into pieces.

Each equality below was seen to fail when the compiled loop was broken on purpose (a
shift of the SFC64 step changed, the row's σ applied after the widths' product, a
rejected position dropped when the room for them ran out).
"""

from __future__ import annotations

import sys

import numpy as np
import pytest

import budget
from budget import _ziggurat as zig
from budget._model import parse_model
from budget._montecarlo import simulate

pytest.importorskip("numba")

from budget import _compiled_draws as compiled  # noqa: E402


def _fill(on: bool, shape: tuple[int, ...], seed: int, scaled: bool
          ) -> tuple[np.ndarray, np.ndarray]:
    """A fill by one path, and the next numbers of the stream after it."""
    assert zig.use_compiled(on) is on
    rng = np.random.Generator(np.random.SFC64(seed))
    out = np.empty(shape)
    rows = shape[0] if len(shape) == 2 else 1
    scale = np.linspace(0.25, 4.0, rows)[:, None] if scaled else None
    shift = np.linspace(-50.0, 7.0, rows)[:, None] if scaled else None
    zig.standard_normal(rng, out, scale, shift)
    return out, rng.bit_generator.random_raw(4)


def test_the_sfc64_step_is_numpys(restore):
    """The words of the compiled SFC64 step are numpy's ``random_raw`` words, and the
    state written back continues numpy's stream."""
    rng = np.random.Generator(np.random.SFC64(2024))
    reference = np.random.Generator(np.random.SFC64(2024))
    out = np.empty(10_000)
    compiled.fast_path(rng, out, out.size, 1, *zig.layers()[1:3], None, None)
    words = reference.bit_generator.random_raw(10_000)
    point = (words >> np.uint64(12)).astype(np.int64)
    signed = zig.layers()[1]
    accepted = point < zig.layers()[2][(words & np.uint64(511)).astype(np.int64)]
    expected = point * signed[(words & np.uint64(511)).astype(np.int64)]
    assert np.array_equal(out[accepted], expected[accepted])
    assert np.array_equal(rng.bit_generator.random_raw(8), reference.bit_generator.random_raw(8))


SHAPES = [(10, 1 << 17), (1, 300_001), (10_000, 256), (3, 70_000), (513, 256), (7, 5_000),
          (2, 1 << 18), (100_000, 3)]  # the last: a correlated group's trials × members


@pytest.mark.parametrize(("shape", "scaled"), [(s, k) for s in SHAPES for k in (False, True)]
                         + [((300_001,), False)])
def test_normal_fills_are_the_numpy_paths_bit_for_bit(restore, shape, scaled):
    """Every shape the Monte Carlo draws (narrow models' long rows, wide models' parts of
    256 trials, pieces of several rows, a last piece of one row, rows longer than a
    piece, a correlated group's many short rows), scaled or not: the same numbers and the
    same stream afterwards."""
    numpy_path = _fill(False, shape, 31, scaled)
    compiled_path = _fill(True, shape, 31, scaled)
    assert np.array_equal(compiled_path[0], numpy_path[0])
    assert np.array_equal(compiled_path[1], numpy_path[1])


def test_short_room_for_the_slow_paths_continues_the_stream(restore, monkeypatch):
    """When the room for rejected positions runs out the loop stops and goes on where it
    stopped: with room for one position at a time, the same numbers."""
    expected = _fill(False, (4, 20_000), 5, True)
    monkeypatch.setattr(compiled, "_CAPACITY", 1)
    monkeypatch.setattr(compiled, "_ROOM", 10**12)
    found = _fill(True, (4, 20_000), 5, True)
    assert np.array_equal(found[0], expected[0])
    assert np.array_equal(found[1], expected[1])


@pytest.mark.parametrize("shape", [(5, 1 << 17), (3332, 256), (1, 5_000)])
def test_rectangular_rows_are_numpys_random(restore, shape):
    """``uniform_rows`` gives ``Generator.random(out=)`` times each row's 2a plus its
    x − a, as numpy computes it, and leaves the stream where numpy would."""
    assert zig.use_compiled(True)
    scale = np.linspace(0.002, 9.0, shape[0])[:, None]
    shift = np.linspace(1.0, 2476.0, shape[0])[:, None]
    rng = np.random.Generator(np.random.SFC64(77))
    found = np.empty(shape)
    assert zig.uniform_rows(rng, found, scale, shift)
    reference = np.random.Generator(np.random.SFC64(77))
    expected = reference.random(shape)
    expected *= scale
    expected += shift
    assert np.array_equal(found, expected)
    assert np.array_equal(rng.random(3), reference.random(3))


def test_small_fills_and_other_generators_take_the_numpy_path(restore):
    assert zig.use_compiled(True)
    table = np.empty((2, 100))
    assert not zig.uniform_rows(np.random.Generator(np.random.SFC64(1)), table,
                                np.ones((2, 1)), np.zeros((2, 1)))
    big = np.empty((2, 1 << 13))
    assert not zig.uniform_rows(np.random.default_rng(1), big, np.ones((2, 1)),
                                np.zeros((2, 1)))  # PCG64: numpy's own
    pcg = zig.standard_normal(np.random.default_rng(4), np.empty(1 << 14))
    zig.use_compiled(False)
    assert np.array_equal(pcg, zig.standard_normal(np.random.default_rng(4), np.empty(1 << 14)))


MODEL = """
title = "paths"
[measurands.y]
equation = "a * b / (c + d) + e * f + g"
[inputs.a]
value = 2.0
u = 0.01
[inputs.b]
value = 3.0
distribution = "rectangular"
half_width = 0.02
[inputs.c]
value = 1.0
u = 0.03
[inputs.d]
value = 0.5
distribution = "rectangular"
half_width = 0.01
[inputs.e]
value = 4.0
u = 0.02
[inputs.f]
value = 1.5
u = 0.01
[inputs.g]
value = 0.1
distribution = "triangular"
half_width = 0.05
[[correlations]]
between = ["e", "f"]
r = 0.6
"""


@pytest.mark.parametrize("workers", [1, 2])
def test_a_whole_simulation_is_the_same_on_either_path(restore, workers):
    """Independent normal and rectangular runs, a correlated pair, a triangular input:
    the Monte Carlo results of either path, on one worker or two, are equal to the bit."""
    model = parse_model(MODEL)
    found = {}
    for on in (False, True):
        zig.use_compiled(on)
        run = simulate(model, trials=300_000, seed=11, workers=workers, keep_samples=True)
        found[on] = run.measurands[0]
    assert np.array_equal(found[True].samples, found[False].samples)
    assert found[True].interval == found[False].interval


def test_without_numba_the_numpy_path_is_used(restore, monkeypatch):
    """A machine without numba (or where it cannot load) draws the same numbers in
    numpy; the loading is not tried again."""
    monkeypatch.setattr(zig, "_compiled", None)
    monkeypatch.setattr(zig, "_held", False)
    monkeypatch.delitem(sys.modules, "budget._compiled_draws")
    monkeypatch.delattr(budget, "_compiled_draws")
    monkeypatch.setitem(sys.modules, "numba", None)  # import numba raises ImportError
    assert zig.use_compiled() is False
    assert not zig.compiled()
    zig.expect(10**12)
    assert not zig.compiled()


def test_loaded_once_enough_numbers_are_drawn_or_announced(restore, monkeypatch):
    monkeypatch.setattr(zig, "_compiled", None)
    monkeypatch.setattr(zig, "_held", False)
    monkeypatch.setattr(zig, "_drawn", 0)
    monkeypatch.setattr(zig, "COMPILED_FROM", 50_000)
    zig.expect(49_999)
    assert not zig.compiled()
    zig.standard_normal(np.random.Generator(np.random.SFC64(1)), np.empty(40_000))
    assert not zig.compiled()
    zig.standard_normal(np.random.Generator(np.random.SFC64(1)), np.empty(10_000))
    assert zig.compiled()
    monkeypatch.setattr(zig, "_compiled", None)
    zig.expect(1)  # a run announcing its numbers loads it at once
    assert zig.compiled()


def test_a_compiled_loop_that_disagrees_is_not_used(restore, monkeypatch):
    """Loading checks a few thousand numbers of each kind against the numpy path: a
    numba that computed otherwise here would leave the numpy path in use."""
    monkeypatch.setattr(zig, "_compiled", None)
    monkeypatch.setattr(compiled, "_HALF_ULP", compiled._HALF_ULP * 2)  # uniforms off
    monkeypatch.setattr(compiled, "_uniform", compiled._uniform.py_func)
    assert zig.use_compiled() is False
    assert not zig.compiled()


def test_a_long_run_loads_them_alongside_and_leaves_no_thread(restore, monkeypatch):
    """A fixed run that will draw COMPILED_FROM numbers loads the compiled draws on a
    thread of their own while it starts in numpy; the thread has ended when the run
    returns, and the run's numbers are those of a run on the numpy path alone."""
    import threading

    model = parse_model(MODEL)
    zig.use_compiled(False)
    expected = simulate(model, trials=200_000, seed=3, keep_samples=True).measurands[0]
    monkeypatch.setattr(zig, "_compiled", None)
    monkeypatch.setattr(zig, "_held", False)
    monkeypatch.setattr(zig, "COMPILED_FROM", 900_000)  # 200,000 × (4 + 2/3)
    found = simulate(model, trials=200_000, seed=3, keep_samples=True).measurands[0]
    assert zig.compiled()
    assert not any(t.name == "budget-load-compiled" for t in threading.enumerate())
    assert np.array_equal(found.samples, expected.samples)


@pytest.mark.parametrize("wait", [2.0, 0.0])
def test_a_long_run_waits_a_while_for_them_then_goes_on_in_numpy(restore, monkeypatch, wait):
    """A run due to load the compiled draws waits up to LOADING_WAIT seconds for them
    before its first block; a loading that takes longer leaves the run to start in numpy
    (the same numbers either way)."""
    import time

    from budget import _montecarlo as montecarlo

    model = parse_model(MODEL)
    assert zig.use_compiled(True)  # compiled in this process: loading again takes no time
    zig.use_compiled(False)
    expected = simulate(model, trials=200_000, seed=3, keep_samples=True).measurands[0]
    monkeypatch.setattr(zig, "_compiled", None)
    monkeypatch.setattr(zig, "_held", False)
    monkeypatch.setattr(zig, "COMPILED_FROM", 900_000)
    monkeypatch.setattr(zig, "LOADING_WAIT", wait)
    load = zig.use_compiled
    monkeypatch.setattr(zig, "use_compiled", lambda on=True: time.sleep(0.3) or load(on))
    first_block: list[bool] = []
    block = montecarlo._Sampler.block

    def recording(self, index, size, out=None):
        if index == 0:
            first_block.append(zig.compiled())
        return block(self, index, size, out)

    monkeypatch.setattr(montecarlo._Sampler, "block", recording)
    found = simulate(model, trials=200_000, seed=3, keep_samples=True).measurands[0]
    assert first_block == [wait > 0.3] and zig.compiled()
    assert np.array_equal(found.samples, expected.samples)


def test_the_environment_can_keep_numba_out(restore, monkeypatch):
    """BUDGET_COMPILED=0: the numpy path, whatever the run's length (docs/cli.md)."""
    monkeypatch.setenv("BUDGET_COMPILED", "0")
    monkeypatch.setattr(zig, "_compiled", None)
    assert zig.use_compiled() is False
    zig.expect(10**12)
    assert not zig.compiled()
    monkeypatch.setenv("BUDGET_COMPILED", "1")
    assert zig.use_compiled() is True


def test_loading_them_leaves_scipy_linalg_out_and_importable():
    """numba looks for scipy.linalg's BLAS when it first loads its array functions; the
    compiled loops need none, so a fresh process loads them without scipy.linalg, still
    agreeing with the numpy path, and imports scipy.linalg afterwards as usual."""
    import subprocess

    script = ("import sys\nfrom budget import _ziggurat as zig\n"
              "assert zig.use_compiled(True)\n"
              "assert 'scipy.linalg' not in sys.modules, 'loaded'\n"
              "assert not any(type(f).__name__ == '_NoBlas' for f in sys.meta_path)\n"
              "import scipy.linalg\nprint(scipy.linalg.cholesky([[4.0]])[0][0])\n")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          timeout=120)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "2.0"


def test_the_refusal_is_the_loading_threads_alone():
    """While one thread loads the compiled loops, another imports scipy.linalg."""
    import threading

    finder = zig._NoBlas()
    with pytest.raises(ImportError):
        finder.find_spec("scipy.linalg")
    assert finder.find_spec("scipy.special") is None
    seen: list[object] = []
    other = threading.Thread(target=lambda: seen.append(finder.find_spec("scipy.linalg")))
    other.start()
    other.join()
    assert seen == [None]
