"""The diagram benchmark returns the structure the bench command expects."""

from chronology.benchmarks import diagram as bench


def test_benchmark_reports_one_case_per_size_with_every_field():
    result = bench.run(sizes=(30,))
    assert result["suite"] == "diagram"
    (case,) = result["cases"]
    assert set(case) == {"contexts", "edges", "crossings", "dot_crossings", "ratio", "seconds"}
    assert case["contexts"] > 0 and case["crossings"] >= 0


def test_dot_comparison_is_skipped_when_dot_is_absent():
    nodes, edges = bench.random_graph(20, seed=1)
    assert bench.dot_crossings(nodes, edges, dot="no-such-layout-program") is None


def test_rank_crossings_of_a_given_drawing_are_counted_on_its_ranks():
    # two nodes per rank, edges crossing once: a(0,0) -> d(1,1), b(1,0) -> c(0,1)
    position = {"a": (0.0, 0.0), "b": (1.0, 0.0), "c": (0.0, 1.0), "d": (1.0, 1.0)}
    splines = [("a", "d", [(0, 0), (0.3, 0.3), (0.6, 0.6), (1, 1)]),
               ("b", "c", [(1, 0), (0.6, 0.3), (0.3, 0.6), (0, 1)])]
    assert bench._count_on_ranks(position, splines) == 1
