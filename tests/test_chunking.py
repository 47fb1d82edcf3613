"""How the scan runner cuts the points still to do into chunks (fdsolver.scans.runner._chunks).

The sizes are a scheduling choice, not physics: the checks are that every point is handed out once, in
consecutive runs, within the limits, and that the guided sizes shrink towards the end (the rule of guided
self-scheduling, Polychronopoulos and Kuck, IEEE Trans. Comput. C-36 (1987) 1425, reference from memory;
here each chunk is half of a worker's share of what is left).  That results do not depend on the chunks is
checked elsewhere (serial, local and Dask runs give the same file: tests/test_sweep.py,
tests/test_map_runner.py).
"""

from itertools import pairwise

import numpy as np
import pytest

from fdsolver.scans.runner import _chunks


def cut(todo, size=None, workers=2, largest=1000):
    return [c.copy() for c in _chunks(np.asarray(todo, dtype=np.int64), size, workers, largest)]


@pytest.mark.parametrize("n, workers, largest", [(10_000, 2, 1000), (10_000, 8, 1000), (1600, 2, 50), (60, 2, 1000),
                                                 (7, 8, 200), (1, 4, 200), (123_457, 3, 1000)])
def test_guided_chunks_hand_out_every_point_once_in_order(n, workers, largest):
    chunks = cut(np.arange(n), None, workers, largest)
    assert np.array_equal(np.concatenate(chunks), np.arange(n))
    sizes = [c.size for c in chunks]
    assert max(sizes) <= largest and min(sizes) >= 1
    assert all(np.all(np.diff(c) == 1) for c in chunks)
    # guided: no chunk is larger than the one before it (a remainder at the end is smaller still)
    assert all(b <= a for a, b in pairwise(sizes))
    # every worker gets a chunk when there are points enough
    assert len(chunks) >= min(n, workers)


def test_guided_chunks_are_fewer_than_equal_ones_and_end_small():
    # 10,000 points on 2 workers with at most 1000 a chunk: the first chunks are full, the last are small
    sizes = [c.size for c in cut(np.arange(10_000), None, 2, 1000)]
    assert sizes[0] == 1000 and sizes[-1] <= 100
    assert len(sizes) <= 20  # chunks of 200 (the old fixed size) made 50 tasks
    # each chunk holds at most a quarter of the points not yet handed out (half of a worker's share), or the
    # smallest size (a tenth of the largest)
    left = 10_000
    for s in sizes:
        assert s <= max(100, -(-left // 4))
        left -= s


def test_a_fixed_size_is_kept_and_gaps_are_not_bridged():
    todo = np.r_[0:5, 9:30, 40:41]  # a resumed run: points 5-8 and 30-39 are done
    fixed = cut(todo, 4)
    assert [list(c) for c in fixed[:3]] == [[0, 1, 2, 3], [4], [9, 10, 11, 12]]
    assert all(c.size <= 4 for c in fixed)
    for chunks in (fixed, cut(todo, None, 2, 200)):
        assert np.array_equal(np.concatenate(chunks), todo)
        assert all(np.all(np.diff(c) == 1) for c in chunks)  # a chunk never spans a gap


def test_nothing_to_do_gives_no_chunk():
    assert cut(np.array([], dtype=np.int64)) == []


def test_a_sweep_keeping_many_wavefunctions_gets_smaller_chunks(tmp_path):
    """A default chunk's records stay within CHUNK_BYTES: a chunk travels back whole and is one checkpoint line."""
    from pathlib import Path

    import fdsolver
    from fdsolver.scans import sweep as sw

    case_path = Path(__file__).resolve().parents[1] / "cases" / "double_square.toml"
    case = fdsolver.load_case(case_path)
    lean = sw.plan_sweep(case, sw.sweep_axes(["d=2:5:12"], case))
    assert lean.max_chunk == sw.MAX_CHUNK  # a few kB a point
    text = case_path.read_text().replace("[sweep]", "[sweep]\npsi_range = [-60.0, 60.0]\npsi_points = 20001")
    (tmp_path / "wide.toml").write_text(text)
    wide = fdsolver.load_case(tmp_path / "wide.toml")
    spec = sw.plan_sweep(wide, sw.sweep_axes(["d=2:5:12"], wide), save_psi=True)
    assert spec.point_bytes >= 20001 * 8  # psi of at least one state, 8 bytes a value
    assert spec.max_chunk < lean.max_chunk  # the byte cap sets the size here, not MAX_CHUNK
    assert spec.max_chunk * spec.point_bytes <= sw.CHUNK_BYTES < (spec.max_chunk + 1) * spec.point_bytes
