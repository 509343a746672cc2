"""Stream input is data only: caps on line length, buffered bytes and events; no eval or shell on
stream text; everything from the stream or site notes reaches HTML, Markdown, JUnit XML and the
terminal inert; servers bind to loopback; livefix writes to a receiver only when told to."""

from __future__ import annotations

import ast
import asyncio
import re
import socket
import threading
import xml.etree.ElementTree as ET
from concurrent.futures import ThreadPoolExecutor
from html.parser import HTMLParser
from pathlib import Path

import pytest
from relkit import ROOT, line, listener, run_cli, sim_epochs

from livefix.framing import MAX_LEN
from livefix.pipeline import Pipeline
from livefix.record.writer import Recorder
from livefix.sources.base import Chunk, Link, LinkEvent, Marker

ESC_CLEAR = "\x1b[2J"  # ECMA-48 erase display
OSC52 = "\x1b]52;c;ZWNobyBwd25lZA==\x07"  # xterm OSC 52: write the clipboard (from memory)
SCRIPT = "<script>alert(1)</script>"
NASTY = f"{SCRIPT} {ESC_CLEAR} {OSC52} *bold* [link](x) | pipe & amp \x9b31m"
CONTROL = ("\x1b", "\x07", "\x9b")


# -- caps --------------------------------------------------------------------------------------
def test_overlong_line_is_dropped_counted_and_the_buffer_stays_bounded() -> None:
    p = Pipeline()
    huge = b"$GPTXT," + b"A" * 1_000_000  # no terminator for a megabyte
    for k in range(0, len(huge), 4096):
        p.feed(Chunk(k / 1e6, 1.7e9, huge[k:k + 4096]))
        assert p.framer.buffered <= MAX_LEN + 1
    p.feed(Chunk(2.0, 1.7e9, b"\r\n" + line("GPTXT,01,01,02,ok") + b"\r\n"))
    c = p.counters()
    assert c.overlong == 1 and c.decoded == 1 and c.bytes == len(huge) + 2 + len(line("GPTXT,01,01,02,ok")) + 2


def test_huge_gsv_numbers_are_data_not_allocations() -> None:
    p = Pipeline()
    bodies = ["GPGSV,999999999,1,99999999999,99999999,9999,99999,999999",
              "GPGSV,1,1,-5,-1,-90,-1,-1", "GPGSV,1,1,1e308,1e308,1e308,1e308,1e308",
              "GPGSV,4294967297,4294967297,4294967297,01,40,083,46"]
    for i in range(2000):
        p.feed(Chunk(float(i), 1.7e9 + i, line(bodies[i % 4]) + b"\r\n"))
    p.finish()
    assert len(p.state.sky()) <= 4
    c = p.counters()
    assert c.lines == 2000 == c.decoded + c.malformed + c.bad_checksum + c.unknown


def test_event_floods_are_bounded_and_rate_limited() -> None:
    p = Pipeline()
    for i in range(20_000):  # a flapping link and time running backwards, every item
        p.feed(LinkEvent(i * 0.001, 1.7e9, Link.ALL[i % 3], f"flap {i}"))
        hms = f"1200{59 - i % 60:02d}.00"
        p.feed(Chunk(i * 0.001, 1.7e9, line(f"GPGGA,{hms},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
                     + b"\r\n"))
    for i in range(3000):  # broken GSV sets: the state model reports them at most every 30 s
        p.feed(Chunk(20 + i * 0.003, 1.7e9, line("GPGSV,3,2,12,01,40,083,46") + b"\r\n"))
    p.finish()
    a = p.snapshot().analysis
    assert len(a["events"]) <= 500 and a["events_dropped"] > 0
    assert sum(e["kind"] == "gsv_incomplete" for e in a["events"]) <= 2
    assert len(p.state.drain_events()) <= 1000


# -- code review, mechanised -------------------------------------------------------------------
def _calls(tree: ast.AST) -> list[tuple[str, ast.Call]]:
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            f = node.func
            name = f.id if isinstance(f, ast.Name) else f.attr if isinstance(f, ast.Attribute) else ""
            out.append((name, node))
    return out


def test_no_eval_exec_pickle_or_shell_on_stream_text() -> None:
    shell_ok = {"livefix/check/ttff.py"}  # the user's own profile command (refused in built-ins)
    # The two-process report pickles its own tuples between itself and the child it started, over
    # pipes only those two hold; stream text only ever travels inside str values there.
    pickle_ok = {"livefix/parallel.py"}
    for path in sorted((ROOT / "livefix").rglob("*.py")):
        rel = path.relative_to(ROOT).as_posix()
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                mods = [a.name for a in node.names] + [getattr(node, "module", None) or ""]
                banned = {"marshal", "shelve"} | ({"pickle"} if rel not in pickle_ok else set())
                assert not banned & set(mods), rel
        for name, call in _calls(tree):
            if isinstance(call.func, ast.Name):
                assert name not in ("eval", "exec", "compile", "__import__"), f"{rel}: {name}"
            elif isinstance(call.func, ast.Attribute) and isinstance(call.func.value, ast.Name) \
                    and call.func.value.id == "os":  # (a call of a call's result, f(x)(y), has no name)
                assert name not in ("system", "popen") and not name.startswith("exec"), f"{rel}: os.{name}"
            # a format template is a literal or an UPPER_CASE module constant; profile.py fills a
            # constant template table with a validated profile field; sim/ and the demo-recording
            # maker format their own demo text
            v = getattr(call.func, "value", None)
            if name == "format" and v is not None and rel != "livefix/check/profile.py" \
                    and not rel.startswith("livefix/sim/") and rel != "livefix/commands/make_recordings.py":
                assert isinstance(v, ast.Constant) or (isinstance(v, ast.Name) and v.id.isupper()), \
                    f"{rel}: format string built at run time"
            for kw in call.keywords:
                if kw.arg == "shell" and not (isinstance(kw.value, ast.Constant) and kw.value.value is False):
                    assert rel in shell_ok, f"{rel}: shell=True"


def test_shell_commands_only_from_the_users_own_profile(tmp_path: Path) -> None:
    from livefix.check.profile import ProfileError, load_profile, parse_profile

    text = '[profile]\nname = "t"\n[ttff_cycles]\nn = 1\ncommand = "echo restart"\n'
    with pytest.raises(ProfileError, match="only in your own profile"):
        parse_profile(text, origin="built-in", builtin=True)
    own = tmp_path / "mine.toml"
    own.write_text(text)
    assert load_profile(str(own)).ttff.command == "echo restart"
    for name in ("commission", "soak"):
        prof = load_profile(name)
        assert prof.ttff is None or prof.ttff.command is None


# -- escaping ----------------------------------------------------------------------------------
def nasty_recording(tmp_path: Path) -> Path:
    path = tmp_path / "nasty.lfr"
    rec = Recorder(path, source="tcp://127.0.0.1:1", notes=NASTY)
    txt = line(f"GPTXT,01,01,02,{SCRIPT}") + b"\r\n"
    bad = f"$GPTXT,01,01,02,{ESC_CLEAR}{OSC52}*00\r\n".encode()
    for k, (t, data) in enumerate(sim_epochs(20, 100)[1600:1800]):
        extra = txt + bad if k % 20 == 0 else b""
        rec.write(Chunk(100.0 + t, 1.7e9 + t, data + extra))
        if k % 50 == 0:
            rec.write(Marker(100.0 + t, 1.7e9 + t, NASTY))
            rec.write(LinkEvent(100.0 + t, 1.7e9 + t, Link.STALLED, NASTY))
    rec.close()
    return path


class _Tags(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []

    def handle_starttag(self, tag: str, attrs: list) -> None:  # noqa: ARG002
        self.tags.append(tag)


def test_report_files_show_stream_and_note_text_inert(tmp_path: Path) -> None:
    rec = nasty_recording(tmp_path)
    out = run_cli("report", str(rec), "-o", str(tmp_path / "out"), "--site", NASTY, "--profile", "commission")
    assert out.returncode in (0, 1), out.stderr
    docs = {p.name: p.read_text(encoding="utf-8") for p in (tmp_path / "out").iterdir()}
    assert {"report.html", "report.md", "report.json", "junit.xml"} <= set(docs)
    for name, text in docs.items():
        assert not any(c in text for c in CONTROL), name  # no raw ESC / BEL / CSI anywhere
    tags = _Tags()
    tags.feed(docs["report.html"])  # the standard library's HTML parser (reference)
    assert "script" not in tags.tags
    assert "&lt;script&gt;" in docs["report.html"]  # shown, as text
    # Markdown: backslash escapes, not entities (issue 16; CommonMark 0.31 section 2.4)
    assert not re.search(r"(?<!\\)<script", docs["report.md"]) and "\\<script\\>" in docs["report.md"]
    ET.fromstring(docs["junit.xml"])  # well-formed XML (stdlib parser)
    assert "<script" not in docs["junit.xml"]
    out = run_cli("replay", "--headless", str(rec))
    assert out.returncode == 0 and not any(c in out.stdout + out.stderr for c in CONTROL)


def test_monitor_event_list_has_no_raw_escape_sequences(tmp_path: Path) -> None:
    from livefix.record.reader import RecordingReader
    from livefix.ui.app import MonitorApp
    from livefix.ui.feed import SnapshotFeed

    p = Pipeline(source=f"tcp://{NASTY}")
    for it in RecordingReader(nasty_recording(tmp_path)).items():
        p.feed(it)
    p.finish()
    snap = p.snapshot()
    assert any("\x1b" in e.get("text", "") for e in snap.analysis["events"])  # the input is nasty
    app = MonitorApp(SnapshotFeed([snap], "nasty"), clock=lambda: 0.0)

    async def run() -> list[str]:
        screens = []
        async with app.run_test(size=(160, 50)) as pilot:
            for key in ("1", "2", "3", "1"):
                await pilot.press(key)
                await pilot.pause()
                strips = app.screen._compositor.render_strips()
                screens.append("\n".join("".join(seg.text for seg in s) for s in strips))
        return screens

    screens = asyncio.run(run())
    assert "Events" in screens[0]
    for text in screens:
        assert not any(c in text for c in CONTROL)


# -- network exposure and writes to the receiver -------------------------------------------------
def test_servers_bind_loopback_by_default() -> None:
    from livefix.export.metrics import MetricsServer, parse_listen

    assert parse_listen("9464") == ("127.0.0.1", 9464) and parse_listen(":0") == ("127.0.0.1", 0)
    m = MetricsServer(lambda: {}, *parse_listen("0"))
    try:
        assert m._server.server_address[0] == "127.0.0.1"
    finally:
        m.close()
    out = run_cli("simulate", "rooftop", "--serve", "0", "--duration", "1s", timeout=30)
    assert out.returncode == 0, out.stderr
    assert "on tcp://127.0.0.1:" in out.stdout


def test_monitoring_never_writes_to_the_receiver(tmp_path: Path) -> None:
    srv = listener()
    port = srv.getsockname()[1]
    got: list[bytes] = []
    stop = threading.Event()

    def client(c: socket.socket) -> None:
        c.settimeout(0.05)
        for _t, data in sim_epochs(20, 100)[1600:1700]:
            if stop.is_set():
                break
            try:
                c.sendall(data)
                got.append(c.recv(4096))
            except TimeoutError:
                pass
            except OSError:
                break
        c.close()

    def serve() -> None:
        srv.settimeout(0.2)
        while not stop.is_set():
            try:
                c, _ = srv.accept()
            except OSError:
                continue
            threading.Thread(target=client, args=(c,), daemon=True).start()

    thr = threading.Thread(target=serve, daemon=True)
    thr.start()
    try:
        spec = f"tcp://127.0.0.1:{port}"
        with ThreadPoolExecutor(2) as ex:  # both at once: the server serves each connection alike
            fa = ex.submit(run_cli, "check", spec, "--profile", "commission", "--duration", "2s",
                           "--report", str(tmp_path / "r"))
            fb = ex.submit(run_cli, "record", spec, "-o", str(tmp_path / "x.lfr"), "--duration", "2s")
            a, b = fa.result(), fb.result()
    finally:
        stop.set()
        thr.join(5)
        srv.close()
    assert a.returncode in (0, 1) and b.returncode == 0, a.stderr + b.stderr
    assert b"".join(got) == b""  # nothing was ever sent to the receiver
    from livefix.record.reader import RecordingReader

    assert any(type(it) is Chunk for it in RecordingReader(tmp_path / "x.lfr").items())  # it did connect


def test_restart_bytes_reach_the_receiver_only_from_a_profile(tmp_path: Path) -> None:
    from livefix.check.profile import load_profile

    own = tmp_path / "ttff.toml"
    own.write_text('[profile]\nname = "mine"\n[ttff_cycles]\nn = 1\nsend = "$PTEST,RESTART"\ntimeout_s = 5\n')
    prof = load_profile(str(own))
    assert prof.ttff.send == b"$PTEST,RESTART*%02X\r\n" % _xor(b"PTEST,RESTART")  # NMEA 0183 checksum


def _xor(b: bytes) -> int:
    x = 0
    for ch in b:
        x ^= ch
    return x
