"""The receiver's edge FIFO (``<p>_rx_edge`` / ``<p>_rx_idle`` queue, ``<p>_rx_poll``
decodes), driven through ctypes on the host build: polling after every edge or once per
full FIFO gives the same frames, and edges that find the FIFO full are counted, not
written over the queued ones."""

from __future__ import annotations

import ctypes

import numpy as np
import pytest

from ookframe.codegen.host_rx import host_receiver
from ookframe.codegen.toolchains import find_tool
from ookframe.frame import encode, random_values, raw_values
from tests.conftest import example_spec

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(find_tool("cc") is None and find_tool("gcc") is None,
                                 reason="no host C compiler")]


class _Counters(ctypes.Structure):
    _fields_ = [("frames_seen", ctypes.c_uint16), ("check_failures", ctypes.c_uint16),
                ("overruns", ctypes.c_uint16), ("cut", ctypes.c_uint16),
                ("edge_overruns", ctypes.c_uint16), ("hunt_skips", ctypes.c_uint16)]


@pytest.fixture(autouse=True)
def _cache(tmp_path_factory, monkeypatch):
    monkeypatch.setenv("OOKFRAME_CACHE", str(tmp_path_factory.getbasetemp() / "rx-cache"))


def _api(rx):
    p = rx.model.prefix
    fns = {n: getattr(rx.lib, f"{p}_rx_{n}") for n in ("init", "edge", "idle", "poll", "take",
                                                       "counters")}
    fns["edge"].argtypes = [ctypes.c_uint8, ctypes.c_uint16]
    fns["take"].restype = ctypes.c_bool
    return fns


def _counters(api) -> dict[str, int]:
    c = _Counters()
    api["counters"](ctypes.byref(c))
    return {n: int(getattr(c, n)) for n, _ in _Counters._fields_}


def _frames(rx, api) -> list[dict[str, object]]:
    out = []
    f = rx.fields_t()
    while api["take"](ctypes.byref(f), None):
        out.append({cf.name: int(getattr(f, cf.name)) for cf in rx.model.fields})
    return out


@pytest.mark.parametrize("name", ["hive_scale.toml", "gate_sensor.toml", "coldframe_vent.toml"])
def test_polling_once_per_full_fifo_gives_the_same_frames(name):
    """Random values (numpy PCG64 seed 4): every copy comes back whether rx_poll runs after
    each edge or only when <PREFIX>_RX_EDGE_FIFO edges are queued; no edge is lost."""
    spec, _ = example_spec(name)
    rx = host_receiver(spec)
    api = _api(rx)
    depth = rx.model.rx.edge_fifo
    rng = np.random.default_rng(4)
    values = [random_values(spec, rng) for _ in range(3)]
    want = [raw_values(spec, v) for v in values for _ in range(spec.repeats)]
    for every in (1, depth):
        api["init"]()
        got = []
        for v in values:
            train = encode(spec, v)
            t = np.rint(np.concatenate(([0.0], np.cumsum(train.durations_us))) / rx.tick_us)
            ticks = np.clip(np.diff(t), 0, 0xFFFF).astype(int)
            for i, (lv, tk) in enumerate(zip(train.levels.tolist(), ticks.tolist(), strict=True)):
                api["edge"](lv, tk)
                if (i + 1) % every == 0:
                    got += _frames(rx, api)
            api["idle"]()
            got += _frames(rx, api)
        assert got == want, f"poll every {every} edges"
        assert _counters(api)["edge_overruns"] == 0


def test_full_fifo_counts_lost_edges():
    """<PREFIX>_RX_EDGE_FIFO + 5 edges without a poll: 5 edge overruns; the queued edges are
    freed by the next poll, after which an edge is queued again."""
    spec, _ = example_spec("hive_scale.toml")
    rx = host_receiver(spec)
    api = _api(rx)
    depth = rx.model.rx.edge_fifo
    api["init"]()
    for i in range(depth + 5):
        api["edge"](i & 1, 250)
    assert _counters(api)["edge_overruns"] == 5
    api["poll"]()
    api["edge"](1, 250)  # room again
    assert _counters(api)["edge_overruns"] == 5
