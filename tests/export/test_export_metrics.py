"""Prometheus metrics: scraped over 127.0.0.1 and read back with prometheus_client's own parser."""

import threading
import urllib.request
from pathlib import Path

import pytest
from prometheus_client.parser import text_string_to_metric_families

from livefix.export.metrics import MetricsServer, parse_listen
from livefix.pipeline import Pipeline
from livefix.sources import open_source

RECORDING = Path(__file__).resolve().parents[2] / "recordings" / "soak-10min.lfr"


@pytest.fixture(scope="module")
def snap():
    src = open_source(str(RECORDING), speed=None)
    p = Pipeline(source=src.name)
    first = None
    for item in src.items(threading.Event()):
        first = item.mono if first is None else first
        if item.mono - first > 400:  # past the scripted outage, jump, stall and checksum burst
            break
        p.feed(item)
    src.close()
    return p.snapshot()


def test_scrape_over_loopback(snap):
    view = {"rx1": (snap, {"source": "soak\x1b[31m", "verdict": False, "failed": 3}), "rx2": (None, {"source": "x"})}
    srv = MetricsServer(lambda: view, "127.0.0.1", 0)
    try:
        assert srv.addr == "127.0.0.1"
        with urllib.request.urlopen(f"http://127.0.0.1:{srv.port}/metrics", timeout=10) as r:
            text = r.read().decode()
    finally:
        srv.close()
    fams = {f.name: f for f in text_string_to_metric_families(text)}  # reference parser
    samples = {(s.name, s.labels.get("receiver")): s for f in fams.values() for s in f.samples}
    a = snap.analysis
    assert samples[("livefix_checksum_errors_total", "rx1")].value == a["stream"]["bad_checksum"] > 0
    assert samples[("livefix_sentences_total", "rx1")].value == a["stream"]["lines"]
    assert samples[("livefix_outages_total", "rx1")].value == a["fix"]["outages_total"]
    assert samples[("livefix_received_bytes_total", "rx1")].value == snap.counters.bytes
    assert samples[("livefix_check_failed_thresholds", "rx1")].value == 3
    info = samples[("livefix_receiver_info", "rx2")]
    assert info.labels["source"] == "x" and "\x1b" not in samples[("livefix_receiver_info", "rx1")].labels["source"]
    assert fams["livefix_checksum_errors"].type == "counter" and fams["livefix_cep95_meters"].type == "gauge"
    for name in fams:  # Prometheus naming: one prefix, snake case
        assert name.startswith("livefix_") and name == name.lower()
    assert not any(n.endswith("_created") for n, _ in samples)


def test_parse_listen_defaults_to_loopback():
    assert parse_listen("9464") == ("127.0.0.1", 9464)
    assert parse_listen(":9464") == ("127.0.0.1", 9464)
    with pytest.raises(ValueError):
        parse_listen("127.0.0.1:http")


def test_exported_names_come_from_the_catalogue(snap):
    # issue 14 item 2: the exporter's families are the catalogue entries with a Prometheus name;
    # the names dashboards already use stay (the list the exporter had before the catalogue)
    from livefix.analysis import catalogue
    from livefix.export.metrics import COUNTERS, GAUGES

    assert {n for n, _, _ in GAUGES} >= {
        "livefix_fix_availability_ratio", "livefix_ttff_seconds", "livefix_ttff_rtk_fixed_seconds",
        "livefix_longest_outage_seconds", "livefix_cep50_meters", "livefix_cep95_meters",
        "livefix_vertical95_meters", "livefix_cn0_mean_dbhz", "livefix_sky_clear_above_degrees",
        "livefix_hdop_computed", "livefix_epoch_rate_hertz"}
    assert {n for n, _, _ in COUNTERS} >= {
        "livefix_sentences", "livefix_checksum_errors", "livefix_malformed_sentences", "livefix_epochs",
        "livefix_jumps", "livefix_outages", "livefix_stalls"}
    for name, helptext, path in GAUGES + COUNTERS:
        m = catalogue.metric(path)
        assert (m.prom, m.description) == (name, helptext)
        assert m.kind == ("counter" if (name, helptext, path) in COUNTERS else "gauge")
    assert snap.analysis["internal_errors"] == 0
