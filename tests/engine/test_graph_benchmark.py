"""The graph benchmark reports every shape and posting order in the shape the bench command prints."""

from chronology.benchmarks import graph as bench


def test_the_benchmark_reports_each_shape_against_both_libraries_and_each_posting_order():
    result = bench.run(sizes=(300,), shapes=("deep_site", "side_by_side"), incremental_contexts=300,
                       reference_time_limit=60.0)
    assert result["suite"] == "graph"
    assert [c["shape"] for c in result["cases"]] == ["deep_site", "side_by_side"]
    for case in result["cases"]:
        assert {"shape", "contexts", "seconds", "peak_mb", "rustworkx_seconds", "networkx_seconds"} <= set(case)
        assert case["contexts"] == 300 and case["seconds"] > 0 and case["peak_mb"] > 0
        assert case["networkx_seconds"] is not None and case["rustworkx_seconds"] is not None
        assert case["witnessed"] == case["redundant"]
    assert [i["order"] for i in result["incremental"]] == ["random", "latest_first", "earliest_first"]
    for item in result["incremental"]:
        assert {"order", "contexts", "p95_ms", "max_ms", "total_s"} <= set(item)
        assert item["refused"] == 0 and item["relationships"] > 300


def test_a_reference_run_predicted_far_over_the_limit_is_skipped_with_the_reason():
    history = {("networkx", "deep_site"): (1000, 5.0)}  # 5 s at 1k: 500 s predicted at 10k
    ref = bench._reference("networkx", bench._networkx_child, "deep_site", 10000, 0, 300.0, history)
    assert ref["seconds"] is None and ref["note"].startswith("skipped: predicted over 300 s")


def test_a_reference_run_after_a_smaller_one_was_stopped_is_skipped():
    history = {("rustworkx", "sequence_over_bottom"): (50000, None)}
    ref = bench._reference("rustworkx", bench._rustworkx_child, "sequence_over_bottom", 100000, 0, 300.0, history)
    assert ref["seconds"] is None and "did not finish" in ref["note"]


def test_only_the_named_reference_library_is_run():
    result = bench.run(sizes=(200,), shapes=("side_by_side",), references=("rustworkx",), incremental_orders=())
    (case,) = result["cases"]
    assert case["rustworkx_seconds"] is not None
    assert case["networkx_seconds"] is None and case["networkx_note"] == "not run"
    assert result["incremental"] == []
