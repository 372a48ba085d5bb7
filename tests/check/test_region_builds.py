"""Region builds as distributed futures equal serial builds; warnings and failures."""

from __future__ import annotations

import pytest

from eftsieve.errors import InputError, KinematicsWarning
from eftsieve.region.build import RegionTask, parallel_region_builds
from eftsieve.theories import get_theory

pytest.importorskip("distributed")

CHEAP = {"families": ["second-derivative"]}


def test_parallel_builds_equal_serial_builds_in_task_order(cluster):
    settings = [CHEAP, {**CHEAP, "pion_masses_mev": [135.0]},
                {**CHEAP, "pion_masses_mev": [150.0]}]
    tasks = [("chpt-su2", settings[0]), ("chpt-su2", settings[1]),
             RegionTask("chpt-su2", settings[2], label="M_pi = 150 MeV")]
    got = parallel_region_builds(tasks, cluster.scheduler_address, timeout=60.0)
    want = [get_theory("chpt-su2").build_region(s) for s in settings]
    assert [r.to_dict() for r in got] == [r.to_dict() for r in want]
    assert len({r.hash for r in got}) == 3


def test_warnings_of_a_build_are_reissued_with_its_name(cluster):
    with pytest.warns(KinematicsWarning, match=r"region build 0 of 1 \(heavy\): pion mass 450"):
        parallel_region_builds([RegionTask("chpt-su2", {**CHEAP, "pion_masses_mev": [450.0]},
                                           label="heavy")], cluster.scheduler_address,
                               timeout=60.0)


def test_invalid_builds_are_input_errors(cluster):
    with pytest.raises(InputError, match="unknown bound family 'third'"):
        parallel_region_builds([("chpt-su2", CHEAP), ("chpt-su2", {"families": ["third"]})],
                               cluster.scheduler_address, timeout=60.0)
    with pytest.raises(InputError, match="unknown theory 'qcd'"):
        parallel_region_builds([("qcd", {})], cluster.scheduler_address, timeout=60.0)


def test_no_tasks_need_no_cluster():  # (but the extra: see test_dask_engine)
    assert parallel_region_builds([]) == []


def test_a_build_that_keeps_failing_is_named(cluster):
    from eftsieve.errors import TaskFailedError

    with pytest.raises(TaskFailedError) as info:
        parallel_region_builds([("chpt-su2", CHEAP), ("chpt-su2", {"families": 5})],
                               cluster.scheduler_address, retries=1, timeout=60.0)
    msg = str(info.value)
    assert msg.startswith("region build 1 of 2 (chpt-su2 {'families': 5})")
    assert "failed after 2 attempt(s): TypeError" in msg
