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

from livefix.report.escape import term_text

# (metric name, help, dotted path into the analysis snapshot). Counts of lists use the list length.
GAUGES: tuple[tuple[str, str, str], ...] = (
    ("livefix_fix_availability_ratio", "Share of epochs with any fix (0-1)", "derived.fix_share"),
    ("livefix_ttff_seconds", "Time to first fix", "fix.ttff_s"),
    ("livefix_ttff_rtk_fixed_seconds", "Time to the first RTK fixed solution", "fix.ttff_rtk_fixed_s"),
    ("livefix_longest_outage_seconds", "Longest span without a fix", "fix.longest_outage_s"),
    ("livefix_cep50_meters", "Horizontal 50 % radius", "position.cep50_m"),
    ("livefix_cep95_meters", "Horizontal 95 % radius", "position.cep95_m"),
    ("livefix_vertical95_meters", "Vertical 95 % error", "position.v95_m"),
    ("livefix_cn0_mean_dbhz", "Mean C/N0 of tracked signals (dB-Hz)", "signal.cn0_mean_dbhz"),
    ("livefix_sky_clear_above_degrees", "Elevation above which the sky is clear", "sky.clear_above_deg"),
    ("livefix_hdop_computed", "HDOP computed from the satellite geometry", "dop.computed.hdop"),
    ("livefix_epoch_rate_hertz", "Epochs per second", "stream.rate_hz"),
)
COUNTERS: tuple[tuple[str, str, str], ...] = (
    ("livefix_sentences", "Framed lines", "stream.lines"),
    ("livefix_checksum_errors", "Sentences refused for a wrong checksum", "stream.bad_checksum"),
    ("livefix_malformed_sentences", "Sentences refused as malformed", "stream.malformed"),
    ("livefix_epochs", "Epochs assembled", "stream.epochs"),
    ("livefix_jumps", "Position jumps", "fix.jumps_total"),
    ("livefix_outages", "Fix outages", "fix.outages_total"),
    ("livefix_stalls", "Stream stalls", "stream.stall_count"),
)


def _value(analysis: dict[str, Any], path: str) -> float | None:
    from livefix.report.document import figure

    v = figure(analysis, path)
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
