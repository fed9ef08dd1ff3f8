"""Fixtures shared by several test modules."""

from pathlib import Path

import pytest

REGION = Path(__file__).resolve().parents[1] / "demo_region"


@pytest.fixture(scope="session")
def demo_out(tmp_path_factory, worker_id):
    """The demo command (lab fit, hillside check, every scenario of the demo region, the
    known-landslide checks) run once for the session: (output folder, console lines). With
    pytest-xdist the workers share one run: the first to take the lock runs it, the others
    wait and read it (the tests only read the demo's outputs)."""
    import contextlib
    import fcntl
    import io
    import json

    from slopescreen.cli.main import main

    def demo(out):
        text = io.StringIO()
        with contextlib.redirect_stdout(text):
            code = main(["demo", "--region", str(REGION), "--out", str(out)])
        assert code == 0, text.getvalue()
        return text.getvalue().splitlines()

    if worker_id == "master":  # one process
        out = tmp_path_factory.mktemp("quillbrook")
        return out, demo(out)
    shared = tmp_path_factory.getbasetemp().parent
    out, said = shared / "quillbrook", shared / "quillbrook-lines.json"
    with open(shared / "quillbrook.lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        if not said.exists():
            said.write_text(json.dumps(demo(out)))
    return out, json.loads(said.read_text())


# modules whose every test runs whole regions, clusters or dense references
SLOW_MODULES = {
    "test_distributed",
    "test_storm_search",
    "test_terrain_gauntlet",
    "test_tiled_routing",
    "test_terrain_cache",
}

# single tests of 4 s or more (measured with --durations): runs of small regions
SLOW_TESTS = {
    "test_warm_rerun_is_byte_identical_to_a_cold_run",
    "test_killed_rerun_leaves_old_or_new_files_and_says_so",
    "test_window_minimum_and_time_to_failure_agree",
    "test_comparison_keys_change_the_report_or_are_refused",
    "test_report_methods_only_for_what_ran",
    "test_every_scenario_key_changes_the_outputs",
    "test_check_and_run_commands",
    "test_matches_numerical_diffusion_solution",
    "test_two_runs_sharing_one_cache",
    "test_two_runs_on_one_folder",
    "test_every_inventory_key_changes_the_outputs",
    "test_every_rainfall_key_changes_the_outputs",
    "test_against_bisection_on_the_storm_factor_of_safety",
    "test_history_minimum_against_a_dense_reference",
}


def pytest_collection_modifyitems(config, items):
    """Mark as slow the tests that need the demo run or sit in a slow module, so that
    ``pytest -m "not slow"`` gives the quick edit-test loop (the full suite stays the
    README's test command and CI's)."""
    for item in items:
        module = item.nodeid.split("::")[0].rsplit("/", 1)[-1].removesuffix(".py")
        name = getattr(item, "originalname", None) or item.name
        if (
            module in SLOW_MODULES
            or name in SLOW_TESTS
            or "demo_out" in getattr(item, "fixturenames", ())
        ):
            item.add_marker(pytest.mark.slow)
