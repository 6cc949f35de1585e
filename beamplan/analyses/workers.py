"""What a sweep worker keeps between the chunks it runs: its live model.

Module-level, so a worker process (of a process pool or a Dask worker) keeps
its model across chunks; per thread, so a Dask worker with several threads
never shares one model between two chunks at once. Models are keyed by the
network's content, not its identity: a worker gets a fresh copy with every
chunk.
"""

from __future__ import annotations

import pickle
import threading

from beamplan.network.graph import Network
from beamplan.optimise.live import CaseSummary, LiveModel

__all__ = ["CACHE", "live_model", "model_key", "models_built", "packed_model"]

Key = tuple[str, int, int, str]


class _Cache(threading.local):
    """This worker thread's live model, its base summaries and chain table."""

    def __init__(self) -> None:
        self.models: dict[Key, LiveModel] = {}
        self.bases: dict[tuple[str, int, int, str, str], CaseSummary] = {}
        self.chains: dict[Key, dict[str, tuple[int, int]]] = {}


CACHE = _Cache()
_BUILT = [0]  # live models built in this process, by any thread (tests check the re-use)


def model_key(network: Network, solver: str) -> Key:
    """The cache key of a network's live model: its content and the solver.

    Examples
    --------
    >>> from beamplan.layout.loader import load_layout
    >>> from beamplan.network.graph import build_network
    >>> net = build_network(load_layout("layouts/pilot-line.yaml"))
    >>> model_key(net, "auto")[1:]  # 1 source, 7 elements, 3 scanners; 10 links
    (11, 10, 'auto')
    """
    return (network.sha256, len(network.nodes), len(network.links), solver)


def live_model(network: Network, solver: str) -> LiveModel:
    """This thread's live model of ``network``, built on first use (one kept at a time)."""
    key = model_key(network, solver)
    if key not in CACHE.models:
        CACHE.models.clear()
        CACHE.bases.clear()
        CACHE.chains.clear()
        CACHE.models[key] = LiveModel(network, solver)
        _BUILT[0] += 1
    return CACHE.models[key]


def packed_model(packed: bytes, key: Key, solver: str) -> LiveModel:
    """The live model for ``key``; the pickled network is read only when it is not kept."""
    live = CACHE.models.get(key)
    if live is not None:
        return live
    network = pickle.loads(packed)  # sent by this very sweep's run_sweep
    assert isinstance(network, Network)
    return live_model(network, solver)


def models_built() -> int:
    """How many live models this process has built, in all its threads.

    Examples
    --------
    >>> models_built() >= 0
    True
    """
    return _BUILT[0]
