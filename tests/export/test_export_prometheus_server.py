"""A real Prometheus server scrapes a running `livefix check` on loopback; values read back through
Prometheus's HTTP query API (/api/v1/query)."""

import json
import re
import shutil
import signal
import socket
import subprocess
import sys
import time
import urllib.parse
import urllib.request
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests" / "check"))
from check_helpers import popen, start_sim, stop  # noqa: E402

pytestmark = pytest.mark.skipif(shutil.which("prometheus") is None, reason="prometheus not installed")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _query(port: int, expr: str) -> list:
    url = f"http://127.0.0.1:{port}/api/v1/query?" + urllib.parse.urlencode({"query": expr})
    with urllib.request.urlopen(url, timeout=5) as r:
        body = json.load(r)
    assert body["status"] == "success"
    return body["data"]["result"]


def test_prometheus_scrapes_livefix_check(tmp_path):
    sim, addr = start_sim("soak", "--serve", "127.0.0.1:0", "--speed", "4")
    chk = prom = None
    try:
        chk = popen("check", f"bench={addr}", "--profile", "soak", "--duration", "5m", "--metrics", "127.0.0.1:0",
                    "--record-dir", str(tmp_path / "rec"))
        line = chk.stderr.readline()
        m = re.search(r"http://127\.0\.0\.1:(\d+)/metrics", line)
        assert m, line
        (tmp_path / "prom.yml").write_text(
            "global:\n  scrape_interval: 1s\n  evaluation_interval: 1s\nscrape_configs:\n"
            f"  - job_name: livefix\n    static_configs:\n      - targets: ['127.0.0.1:{m.group(1)}']\n")
        pport = _free_port()
        prom = subprocess.Popen(["prometheus", f"--config.file={tmp_path / 'prom.yml'}",
                                 f"--web.listen-address=127.0.0.1:{pport}",
                                 f"--storage.tsdb.path={tmp_path / 'tsdb'}"],
                                stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        deadline = time.monotonic() + 60
        result: list = []
        while time.monotonic() < deadline:
            try:
                result = _query(pport, 'livefix_sentences_total{receiver="bench"}')
                if result and float(result[0]["value"][1]) > 0:
                    later = _query(pport, 'livefix_checksum_errors_total{receiver="bench"}')
                    if later:
                        break
            except OSError:
                pass
            time.sleep(0.5)
        assert result and float(result[0]["value"][1]) > 0, result
        assert result[0]["metric"]["job"] == "livefix"
        assert _query(pport, 'up{job="livefix"}')[0]["value"][1] == "1"
        info = _query(pport, "livefix_receiver_info")
        assert info[0]["metric"]["receiver"] == "bench" and info[0]["metric"]["source"].startswith("tcp://127.0.0.1")
    finally:
        if chk is not None and chk.poll() is None:
            chk.send_signal(signal.SIGINT)
            try:
                chk.communicate(timeout=20)
            except subprocess.TimeoutExpired:
                chk.kill()
        if prom is not None:
            stop(prom)
        stop(sim)
