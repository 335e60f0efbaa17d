"""The Dask engine gives the local engine's results bit for bit.

Starts a ``LocalCluster`` of two worker processes on this machine (CI installs the
optional ``dask`` extra; without it the tests are skipped).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import kinetics
from kinetics.cli import main
from kinetics.errors import SettingError
from kinetics.sweep import make_plan, run_chunks

# a local cluster takes a few seconds to start and to import the package on its workers
pytestmark = pytest.mark.slow

distributed = pytest.importorskip(
    "dask.distributed", reason="the optional dependency dask[distributed] is not installed"
)

SCHEME = """\
A -> B      k1 = 0.12 1/min
B -> C      k2 = 0.045 min-1
B -> D      k3 = 0.01 1/min
C -> E      k4 = 2.0e-5 s-1
start A = 0.80 mol/L
"""


@pytest.fixture(scope="module")
def cluster():
    import dask

    # generous start-up timeouts: worker processes import the package and load the
    # compiled kernels, which takes long on a loaded two-core machine
    with (
        dask.config.set(
            {"distributed.comm.timeouts.connect": "90s", "distributed.comm.timeouts.tcp": "90s"}
        ),
        distributed.LocalCluster(
            n_workers=2,
            processes=True,
            threads_per_worker=1,
            dashboard_address=None,
            timeout="90s",
        ) as c,
    ):
        yield c


def _collect(plan, engine, scheduler=None, curves=True):
    out = {}
    run_chunks(
        plan,
        range(plan.n_chunks),
        lambda r: out.__setitem__(r.index, r),
        curves=curves,
        engine=engine,
        scheduler=scheduler,
    )
    return [out[k] for k in range(plan.n_chunks)]


def test_dask_equals_local_bit_for_bit(cluster):
    s = kinetics.parse(SCHEME)
    plan = make_plan(
        s, ["k2=0.01:1:20:log", "start:A=0.4,0.8"], np.linspace(0, 3 * 3600, 31), chunk_size=9
    )
    local = _collect(plan, "local")
    remote = _collect(plan, "dask", cluster.scheduler_address)
    assert len(remote) == plan.n_chunks
    for a, b in zip(local, remote, strict=True):
        assert (a.start, a.stop) == (b.start, b.stop)
        np.testing.assert_array_equal(a.parameters, b.parameters)
        np.testing.assert_array_equal(a.summary, b.summary)  # NaN in the same places
        np.testing.assert_array_equal(a.curves, b.curves)


def test_dask_monte_carlo_equals_local(cluster):
    s = kinetics.parse(SCHEME)
    plan = make_plan(
        s,
        [],
        np.linspace(0, 3600, 5),
        samples=60,
        spread=["k1=15%", "k3=30%"],
        seed=2,
        chunk_size=25,
    )
    local = _collect(plan, "local", curves=False)
    remote = _collect(plan, "dask", cluster.scheduler_address, curves=False)
    for a, b in zip(local, remote, strict=True):
        np.testing.assert_array_equal(a.parameters, b.parameters)
        np.testing.assert_array_equal(a.summary, b.summary)


def test_cli_dask_scheduler_writes_the_same_table(cluster, tmp_path):
    scheme = tmp_path / "s.scheme"
    scheme.write_text(SCHEME, encoding="utf-8")
    common = [
        "sweep",
        str(scheme),
        "--until",
        "2h",
        "--vary",
        "k2=0.01:1:12:log",
        "--chunk-size",
        "5",
        "--no-caution",
    ]
    assert main([*common, "--out", str(tmp_path / "local.csv")]) == 0
    assert (
        main(
            [
                *common,
                "--out",
                str(tmp_path / "dask.csv"),
                "--engine",
                "dask",
                "--scheduler",
                cluster.scheduler_address,
            ]
        )
        == 0
    )
    assert (tmp_path / "local.csv").read_text() == (tmp_path / "dask.csv").read_text()
    assert len(pd.read_csv(tmp_path / "dask.csv")) == 12


def test_unreachable_scheduler_is_a_setting_error():
    plan = make_plan(kinetics.parse(SCHEME), ["k1=0.1,0.2"], [0.0, 60.0])
    with pytest.raises(SettingError, match="cannot reach the Dask scheduler"):
        run_chunks(
            plan,
            [0],
            lambda r: None,
            engine="dask",
            scheduler="tcp://127.0.0.1:9",
            connect_timeout=1.0,
        )
