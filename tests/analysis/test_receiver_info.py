"""What the receiver announces (livefix/analysis/receiver.py): snapshot `receiver.texts` and the
model/firmware named in generic words; nothing guessed from a bare product name."""

from __future__ import annotations

from pathlib import Path

import pytest

from livefix.analysis.receiver import guess
from livefix.items import Chunk
from livefix.pipeline import run_items


def line(body: str) -> bytes:
    """NMEA 0183 checksum: XOR of the bytes between '$' and '*', two uppercase hex digits."""
    cs = 0
    for b in body.encode("ascii"):
        cs ^= b
    return f"${body}*{cs:02X}\r\n".encode()


def fix(t: str) -> bytes:
    # hand-written epoch (NMEA 0183 4.11 GGA/RMC field layout) at UTC t on 23 March 1994
    return (line(f"GPGGA,{t},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,")
            + line(f"GPRMC,{t},A,4807.038,N,01131.000,E,000.0,084.4,230394,003.1,W"))


def stream(texts: list[str], repeats: int = 0) -> list[Chunk]:
    banner = b"".join(line(f"GNTXT,{len(texts):02d},{k:02d},02,{t}") for k, t in enumerate(texts, 1))
    out = [Chunk(0.0, 1.7e9, banner)]
    for s in range(1, 6 + repeats):
        out.append(Chunk(float(s), 1.7e9 + s, fix(f"12{s // 60 + 35:02d}{s % 60:02d}")
                         + (line("GNTXT,01,01,02,ANTENNA OK") if s > 5 else b"")))
    return out


def test_snapshot_lists_texts_and_guesses() -> None:
    texts = ["MODEL BENCH-RX 9", "FW VERSION 4.5.6", "HW REV 2"]
    p = run_items(stream(texts, repeats=30))
    rx = p.analyzer.snapshot(p.counters())["receiver"]
    assert rx["texts"] == [*texts, "ANTENNA OK"]  # repeats of ANTENNA OK kept once
    assert rx["model"] == "BENCH-RX 9" and rx["firmware"] == "4.5.6" and rx["hardware"] == "REV 2"
    assert rx["max_texts"] == 20 and rx["max_chars"] == 120  # the bounds shown with the figures
    assert p.analyzer.internal_errors == 0


def test_no_texts() -> None:
    p = run_items(stream([]))
    rx = p.analyzer.snapshot(p.counters())["receiver"]
    assert rx["texts"] == [] and rx["model"] is None and rx["firmware"] is None
    assert p.analyzer.internal_errors == 0


def test_guess_rules() -> None:
    # (texts, model, firmware): only generic keys count; the first text naming an item wins
    cases = [
        (["Firmware: 2.4.1, build 7"], None, "2.4.1"),
        (["SW 1.0; HW 2.0"], "2.0", "1.0"),  # HW stands in for the model when none is named
        (["HW version 00080000"], "00080000", None),  # a hardware version is no firmware version
        (["FWVER=ABC 3.01", "PROTVER=18.00", "MOD=XY-1"], "XY-1", "ABC 3.01"),  # protocol is not firmware
        (["Receiver model: Bench-9 version 1.2"], "Bench-9", "1.2"),
        (["BENCH-RX 9 READY", "ANTENNA OK", "mode 3"], None, None),  # a bare name or a mode says nothing
        (["FW 1.0", "FW 2.0"], None, "1.0"),
    ]
    for texts, model, firmware in cases:
        g = guess(texts)
        assert (g["model"] or g["hardware"], g["firmware"]) == (model, firmware), texts


CORPUS = Path(__file__).resolve().parents[2].parent / "shared" / "realdata" / "corpus"


def test_corpus_repeated_status_text_is_kept_once() -> None:
    """pyubx2_2023-4-17_82912_serial-COM3.ubx (see shared/realdata/SOURCES.md) repeats one TXT status
    text about a hundred times between binary frames: one text kept, no model or firmware named."""
    f = CORPUS / "pyubx2_2023-4-17_82912_serial-COM3.ubx"
    if not f.is_file():
        pytest.skip("public corpus not present (../shared/realdata/corpus)")
    data = f.read_bytes()
    p = run_items([Chunk(0.0, 1.7e9, data)])
    rx = p.analyzer.snapshot(p.counters())["receiver"]
    assert data.count(b"TXT,") > 50  # the file's own repeats (counted here, not by livefix)
    assert rx["texts"] == ["txbuf alloc"] and rx["model"] is None and rx["firmware"] is None
    assert p.analyzer.internal_errors == 0
