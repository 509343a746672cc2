"""Prometheus metrics of the live snapshots, for fleets of receivers on benches.

A custom collector reads the latest snapshot of each receiver at scrape time (no second copy of
the state), registered in a private CollectorRegistry so nothing else leaks into the page. Names
follow the Prometheus conventions: `livefix_` prefix, base units in the name, `_total` counters,
`_info` for metadata, one `receiver` label. The server binds 127.0.0.1 unless told otherwise.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from typing import Any

from livefix.analysis import catalogue
from livefix.analysis.paths import figure
from livefix.report.escape import term_text

# (metric name, help, dotted path into the analysis snapshot), generated from the metric catalogue:
# an entry with a Prometheus name is exported, as a gauge or a counter by its kind.
GAUGES: tuple[tuple[str, str, str], ...] = tuple((m.prom, m.description, m.path)
                                                 for m in catalogue.exported("gauge"))
COUNTERS: tuple[tuple[str, str, str], ...] = tuple((m.prom, m.description, m.path)
                                                   for m in catalogue.exported("counter"))


def _value(analysis: dict[str, Any], path: str) -> float | None:
    v = figure(analysis, path)[0]
    return v if v is not None and math.isfinite(v) else None


class SnapshotCollector:
    """Yields metric families from `latest()` -> {receiver name: (Snapshot | None, extra dict)}.

    extra may hold "source", "verdict" (True/False/None) and "failed" (count of failed thresholds).
    """

    def __init__(self, latest: Callable[[], dict[str, tuple[Any, dict[str, Any]]]]) -> None:
        self._latest = latest

    def collect(self) -> Iterator[Any]:
        from prometheus_client.core import CounterMetricFamily, GaugeMetricFamily, InfoMetricFamily

        from livefix import __version__

        snaps = self._latest()
        info = InfoMetricFamily("livefix_receiver", "Receiver and source", labels=["receiver"])
        up = GaugeMetricFamily("livefix_link_up", "1 while bytes are streaming", labels=["receiver"])
        quality = GaugeMetricFamily("livefix_fix_quality", "GGA quality of the last epoch", labels=["receiver"])
        used = GaugeMetricFamily("livefix_satellites_used", "Satellites used in the last epoch",
                                 labels=["receiver"])
        bytes_ = CounterMetricFamily("livefix_received_bytes", "Bytes received", labels=["receiver"])
        passing = GaugeMetricFamily("livefix_check_passing", "1 while every threshold passes so far",
                                    labels=["receiver"])
        failed = GaugeMetricFamily("livefix_check_failed_thresholds", "Thresholds failing so far",
                                   labels=["receiver"])
        gauges = {n: GaugeMetricFamily(n, h, labels=["receiver"]) for n, h, _ in GAUGES}
        counters = {n: CounterMetricFamily(n, h, labels=["receiver"]) for n, h, _ in COUNTERS}
        for name, (snap, extra) in snaps.items():
            rx = [term_text(name)]
            info.add_metric(rx, {"source": term_text(extra.get("source", "")), "version": __version__})
            if snap is None:
                continue
            up.add_metric(rx, 1.0 if snap.link == "streaming" else 0.0)
            if snap.epoch is not None:
                quality.add_metric(rx, float(snap.epoch.quality))
                if snap.epoch.num_sv is not None:
                    used.add_metric(rx, float(snap.epoch.num_sv))
            bytes_.add_metric(rx, float(snap.counters.bytes))
            if extra.get("verdict") is not None:
                passing.add_metric(rx, 1.0 if extra["verdict"] else 0.0)
                failed.add_metric(rx, float(extra.get("failed", 0)))
            a = snap.analysis or {}
            for n, _, path in GAUGES:
                v = _value(a, path)
                if v is not None:
                    gauges[n].add_metric(rx, v)
            for n, _, path in COUNTERS:
                v = _value(a, path)
                if v is not None:
                    counters[n].add_metric(rx, v)
        yield from (info, up, quality, used, bytes_, passing, failed, *gauges.values(), *counters.values())


def parse_listen(text: str) -> tuple[str, int]:
    """'9464', ':9464', '127.0.0.1:9464' -> (addr, port); loopback unless an address is given."""
    host, _, port = text.rpartition(":")
    try:
        p = int(port)
    except ValueError as exc:
        raise ValueError(f"bad metrics address {text!r}: use 127.0.0.1:PORT") from exc
    if not 0 <= p <= 65535:
        raise ValueError(f"bad metrics port {p}")
    return (host.strip("[]") or "127.0.0.1", p)


class MetricsServer:
    """The HTTP endpoint; `port` is the bound port (useful with port 0)."""

    def __init__(self, latest: Callable[[], dict[str, tuple[Any, dict[str, Any]]]], addr: str = "127.0.0.1",
                 port: int = 0) -> None:
        from prometheus_client import CollectorRegistry, start_http_server

        self.registry = CollectorRegistry(auto_describe=False)
        self.registry.register(SnapshotCollector(latest))
        self._server, self._thread = start_http_server(port, addr=addr, registry=self.registry)
        self.addr = addr
        self.port = int(self._server.server_address[1])

    def text(self) -> str:
        from prometheus_client import generate_latest

        return generate_latest(self.registry).decode("utf-8")

    def close(self) -> None:
        self._server.shutdown()
        self._server.server_close()
        self._thread.join(timeout=5)
