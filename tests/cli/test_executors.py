"""Where a build runs does not change its bytes: in process, local workers, a Dask cluster."""

from __future__ import annotations

import pytest

import obvert

TARGETS = ["c99", "json"]


def _spec() -> obvert.Spec:
    """Two thickness rows (two tasks) of one start temperature each: small but parallel."""
    return obvert.demo_spec("griddle", thickness=["8 mm", "10 mm"], start_temperature=["2 degC"])


@pytest.mark.slow
def test_local_workers_and_dask_cluster_give_the_same_bytes() -> None:
    distributed = pytest.importorskip("distributed")
    spec = _spec()
    # local worker processes (the rows in parallel) against a Dask cluster; that a row's result
    # does not depend on the process it ran in is what both show
    here = obvert.emit(obvert.compile_table(spec, TARGETS, jobs=2), TARGETS)
    with (
        distributed.LocalCluster(
            n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None
        ) as cluster,
        distributed.Client(cluster) as client,
    ):
        events = []
        table = obvert.compile_table(
            spec, TARGETS, executor=client.get_executor(), progress=events.append
        )
    assert obvert.emit(table, TARGETS) == here
    assert [(e.stage, e.done, e.total) for e in events][-1] == ("nodes", 2, 2)
