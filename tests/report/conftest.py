"""Fixtures for the run report: a simulated cycling run in a real store, and its report."""

from __future__ import annotations

import pytest
from testkit.report import SimRun, build_sim_store


@pytest.fixture(scope="session")
def sim_run(tmp_path_factory: pytest.TempPathFactory) -> SimRun:
    return build_sim_store(tmp_path_factory.mktemp("sim") / "sim.db")


@pytest.fixture(scope="session")
def sim_report(sim_run: SimRun, tmp_path_factory: pytest.TempPathFactory):  # noqa: ANN201
    from soaklog.report import make_report

    out = tmp_path_factory.mktemp("report")
    return make_report(sim_run.db, out_dir=out)
