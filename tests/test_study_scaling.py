"""Studies that scale: even chunks of neighbouring points, the derivative expansion only
where it repays its cost, a worker's share reaching its NLP cache, the progress bar.

The speed-up itself is measured by tests/benchmarks/bench_study.py, not here.
"""

from __future__ import annotations

from types import SimpleNamespace

import pytest
from cases import vertical_q_problem, vertical_q_yaml

from ascentplan.optimisation.nlp import (
    EXPANSION_COST_ITERATIONS,
    EXPANSION_SAVING_FRACTION,
    AscentNLP,
)
from ascentplan.pipeline import NLP_CACHE, solve
from ascentplan.study.files import file_digest
from ascentplan.study.progress import Progress
from ascentplan.study.runner import MAX_CHUNK, chunk_points
from ascentplan.study.worker import solve_points

# the single-stage throttleable rocket of cases.vertical_q_problem as a file (a study sends
# its workers a path), on a coarse mesh
PROBLEM_YAML = vertical_q_yaml("vertical-q-scaling")


@pytest.mark.parametrize("points", [1, 2, 3, 7, 19, 20, 21, 39, 40, 41, 97, 200])
@pytest.mark.parametrize("workers", [1, 2, 3, 4, 8])
def test_chunks_are_even_neighbours_and_the_same_number_for_every_worker(points, workers):
    # common practice (static block scheduling): equal shares to within one item
    items = [(i, {"x": i}) for i in range(points)]
    chunks = chunk_points(items, workers)
    assert [item for chunk in chunks for item in chunk] == items  # neighbours, in order
    sizes = [len(c) for c in chunks]
    assert max(sizes) - min(sizes) <= 1
    assert max(sizes) <= MAX_CHUNK
    # every worker gets as many chunks, unless there are fewer points than that
    assert len(chunks) % workers == 0 or len(chunks) == points


def test_twenty_points_on_two_workers_are_two_halves():
    # the split that ran at 0.82x: 8, 8 and 4 points, one worker solving 12 of 20
    items = list(range(20))
    assert [len(c) for c in chunk_points(items, 2)] == [10, 10]
    assert [len(c) for c in chunk_points(list(range(40)), 2)] == [10, 10, 10, 10]
    # an explicit chunk size is kept
    assert [len(c) for c in chunk_points(items, 2, chunk_size=8)] == [8, 8, 4]


class _Solved(SimpleNamespace):
    """An NLP's record of solves, as AscentNLP keeps it (all the rule reads)."""

    def __init__(self, solves, iterations):
        super().__init__(accelerated=False, solves_done=solves, iterations_done=iterations)

    def expansion_pays(self, expected_solves=None):
        return AscentNLP.expansion_pays(self, expected_solves)


def test_expansion_rule_in_iterations():
    assert EXPANSION_COST_ITERATIONS / EXPANSION_SAVING_FRACTION == pytest.approx(1000.0 / 3.0)
    # nothing solved yet: nothing to judge by
    assert not _Solved(0, 0).expansion_pays(50)
    # a cold solve (21 iterations) then four warm ones (about 9): the break-even rule
    # expects as many more solves as made, and never expands within the five
    history = [21, 9, 11, 19]
    for n in range(1, 5):
        assert not _Solved(n, sum(history[:n])).expansion_pays(), n
    # after about 330 iterations it does (the slower derivatives have cost what expanding
    # costs)
    assert not _Solved(30, 300).expansion_pays()
    assert _Solved(34, 340).expansion_pays()
    # a study worker with 19 points left expands after its first solve; with 3 it waits
    assert _Solved(1, 21).expansion_pays(19)
    assert not _Solved(1, 21).expansion_pays(3)


def test_a_short_warm_started_loop_does_not_pay_for_the_expansion():
    problem = vertical_q_problem(max_q=30e3, nodes=20, max_refinements=0)
    previous = None
    for k in range(5):
        previous = solve(problem.with_limits(max_dynamic_pressure=30e3 + 500.0 * k),
                         warm_start=previous)
        assert previous.solution.status == "optimal", previous.message
    built = [entry[0] for entry in NLP_CACHE._entries.values()]
    assert built and not any(nlp.accelerated for nlp in built)
    assert sum(nlp.solves_done for nlp in built) >= 5
    # an announced run of solves that repays the expansion gets it on the next solve
    NLP_CACHE.expect(50)
    try:
        solve(problem.with_limits(max_dynamic_pressure=33e3), warm_start=previous)
    finally:
        NLP_CACHE.expect(None)
    assert any(nlp.accelerated for nlp in built)


def test_a_worker_share_reaches_the_nlp_cache(tmp_path):
    path = tmp_path / "vertical.yaml"
    path.write_text(PROBLEM_YAML, encoding="utf-8")
    items = [(0, {"limits.max_dynamic_pressure": 30e3}),
             (1, {"limits.max_dynamic_pressure": 31e3})]
    rows = list(solve_points(str(path), file_digest(path), items, run=1, share=40))
    assert [r["status"] for r in rows] == ["optimal", "optimal"]
    assert rows[1]["warm_started"]
    # told of 40 points, the worker expands the derivatives on its second solve
    assert any(entry[0].accelerated for entry in NLP_CACHE._entries.values())
    # and forgets the share once its chunk is done
    assert NLP_CACHE.expected_solves is None


def test_progress_bar_by_default_and_silent_when_quiet(capsys):
    bar = Progress(True, 4, 1, "demo sweep")
    bar.note("4 points on 2 local worker processes")
    bar.point({"index": 1, "status": "optimal"})
    bar.point({"index": 2, "status": "failed", "error": "ValueError: x"})
    bar.close()
    err = capsys.readouterr().err
    assert "demo sweep" in err and "3/4" in err and "1 not optimal" in err
    assert "4 points on 2 local worker processes" in err
    quiet = Progress(False, 4, 0, "demo sweep")
    quiet.note("nothing")
    quiet.point({"index": 0, "status": "optimal"})
    quiet.close()
    assert capsys.readouterr().err == ""
    assert quiet.count == 1
