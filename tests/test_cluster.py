"""Sweeps on a real Dask ``distributed.LocalCluster`` (worker processes) and the --cluster option.

The reference for every cluster run is the same sweep run in this process: the
cluster may only change where the cases are planned, never a byte of the report.
"""

from __future__ import annotations

import builtins
import logging
from collections.abc import Iterator
from typing import Any

import pytest

from beamplan.analyses.outages import models_built, outage_cases, run_sweep
from beamplan.cli.main import main
from beamplan.layout.loader import load_layout
from beamplan.network.graph import build_network
from beamplan.report.analyses import sweep_document, to_json

distributed = pytest.importorskip("distributed")


@pytest.fixture(scope="module")
def client() -> Iterator[Any]:
    """Two worker processes of one thread each, no dashboard, quiet logs."""
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=":0", silence_logs=logging.ERROR) as cluster, \
            distributed.Client(cluster) as dask_client:
        yield dask_client


def test_cluster_sweep_gives_the_same_json_bytes_as_in_process(
        capfd: pytest.CaptureFixture[str]) -> None:
    assert main(["sweep", "layouts/two-bay.yaml", "--json", "-"]) == 0
    here = capfd.readouterr().out
    assert main(["sweep", "layouts/two-bay.yaml", "--json", "-", "--cluster", "local:2"]) == 0
    there, err = capfd.readouterr()
    assert '"total_cases": 79' in here  # hand count: 79 nodes in service in two-bay
    assert there == here
    assert "Traceback" not in err


def test_workers_keep_their_live_model_across_chunks(client: Any) -> None:
    net = build_network(load_layout("layouts/two-bay.yaml"))
    cases = outage_cases(net)
    here = run_sweep(net, cases, chunk_size=8)
    before = client.run(models_built)
    executor = client.get_executor(pure=False)
    there = run_sweep(net, cases, executor=executor, chunk_size=8)
    executor.shutdown()
    after = client.run(models_built)
    # 79 cases in chunks of 8 are 10 chunks on 2 workers (hand count), yet each worker
    # built one live model for this network: the model is kept between chunks.
    built = {w: after[w] - before.get(w, 0) for w in after}
    assert len(built) == 2 and 1 <= sum(built.values()) <= 2 and max(built.values()) <= 1, built
    assert to_json(sweep_document(there, "test")) == to_json(sweep_document(here, "test"))


def test_missing_extra_is_one_clear_line(monkeypatch: pytest.MonkeyPatch,
                                         capfd: pytest.CaptureFixture[str]) -> None:
    real_import = builtins.__import__

    def no_dask(name: str, *args: Any, **kwargs: Any) -> Any:
        if name.split(".")[0] in ("dask", "distributed"):
            raise ImportError(f"No module named {name!r}")
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_dask)
    code = main(["sweep", "layouts/two-bay.yaml", "-q", "--cluster", "local:2"])
    err = capfd.readouterr().err
    assert code == 2  # docs/exit-codes.md: USAGE
    assert err.count("\n") == 1 and "Traceback" not in err
    assert 'pip install "beamplan[cluster]"' in err


@pytest.mark.parametrize("argv", [
    ["--cluster", "local:0"],
    ["--cluster", "local:two"],
    ["--cluster", "local:2", "--jobs", "2"],
])
def test_bad_cluster_options_are_usage_errors(argv: list[str],
                                              capfd: pytest.CaptureFixture[str]) -> None:
    assert main(["sweep", "layouts/two-bay.yaml", "-q", *argv]) == 2
    err = capfd.readouterr().err
    assert "--cluster" in err and "Traceback" not in err


def test_an_unreachable_scheduler_is_one_clear_line(monkeypatch: pytest.MonkeyPatch,
                                                    capfd: pytest.CaptureFixture[str]) -> None:
    import socket

    from beamplan.cli import executors

    with socket.socket() as probe:  # a port that nothing listens on (bound, then freed)
        probe.bind(("127.0.0.1", 0))
        port = probe.getsockname()[1]
    monkeypatch.setattr(executors, "CONNECT_TIMEOUT", "1s")
    address = f"tcp://127.0.0.1:{port}"
    assert main(["sweep", "layouts/pilot-line.yaml", "-q", "--cluster", address]) == 2
    err = capfd.readouterr().err
    assert err.startswith(f"beamplan: error: --cluster {address}: cannot reach")
    assert err.count("\n") == 1
