"""docs/recording.md says what livefix/record writes, field by field: the header keys in their order,
the record kinds, the limits, and an example file whose lengths and CRCs are real (checked here with
zlib's CRC-32, the IEEE 802.3 polynomial, independently of the writer)."""

from __future__ import annotations

import json
import re
import zlib
from pathlib import Path

from livefix.items import Chunk, Link, LinkEvent, Marker
from livefix.record import fmt, reader, writer
from livefix.record.reader import RecordingReader
from livefix.record.writer import Recorder

DOC = (Path(__file__).resolve().parents[1] / "docs" / "recording.md").read_text()


def _section(title: str) -> str:
    return DOC.split(f"## {title}", 1)[1].split("\n## ", 1)[0]


def _example() -> bytes:
    """The example file of the doc as bytes (`\\n` and `\\r\\n` written out as in the text)."""
    block = _section("A short file").split("```", 2)[1].strip("\n")
    return "".join(ln.replace("\\r\\n", "\r\n").replace("\\n", "\n") for ln in block.splitlines()).encode()


def test_header_table_lists_exactly_the_keys_the_writer_writes_in_order(tmp_path: Path) -> None:
    documented = re.findall(r"^\| `(\w+)` \|", _section("The header line"), re.M)
    rec = Recorder(tmp_path / "x.lfr", source="stdin", notes="a\nb", site={"name": "roof"})
    rec.close()
    head = json.loads((tmp_path / "x.lfr").read_bytes().split(b"\n", 1)[0])
    assert documented == list(head)
    assert head["format"] == fmt.FORMAT_NAME and head["version"] == fmt.VERSION == 1


def test_record_kinds_and_limits_are_the_code_s() -> None:
    records = _section("Records")
    kinds = dict(re.findall(r"^\| `([A-Z])` \| (\w+)", records, re.M))
    assert sorted(kinds) == sorted([*fmt.KINDS.values(), fmt.END])
    assert f"at most {fmt.MAX_HEADER_LINE >> 20} MiB" in _section("The header line")
    assert f"0 to {reader.MAX_PAYLOAD >> 20} MiB" in records
    assert f"longer than {fmt.MAX_RECORD_LINE} bytes" in records
    states = re.findall(r"`(\w+)`", records.split("STATE is one of", 1)[1].split("(`livefix.items.Link`)")[0])
    assert tuple(states) == Link.ALL
    disk = _section("When the bytes reach the disk")
    assert f"every {writer.FLUSH_S} s" in disk and f"{writer.BUFFER_MAX >> 10} KiB" in disk


def test_the_example_file_is_a_real_recording() -> None:
    data = _example()
    assert data.startswith(fmt.MAGIC)
    body = data.split(b"\n", 1)[1]
    # every record's LENGTH and CRC agree with its payload (zlib.crc32 here, not the writer's code)
    pos, seen = 0, []
    while pos < len(body):
        line_end = body.index(b"\n", pos)
        kind, _mono, _wall, n, crc = body[pos + 1:line_end].split(b" ")
        payload = body[line_end + 1:line_end + 1 + int(n)]
        assert len(payload) == int(n) and f"{zlib.crc32(payload):08x}".encode() == crc, kind
        assert body[line_end + 1 + int(n):line_end + 2 + int(n)] == b"\n"
        seen.append(kind.decode())
        pos = line_end + 2 + int(n)
    assert seen == ["L", "D", "M", "E"]


def test_the_example_reads_back_as_the_items_it_shows(tmp_path: Path) -> None:
    # the "..." of the example header stands for the other keys; a reader ignores keys it does not
    # know, so the example header alone must read
    path = tmp_path / "example.lfr"
    path.write_bytes(_example().replace(b', ...}', b'}', 1))
    r = RecordingReader(str(path))
    items = list(r.items())
    assert r.damage is None and r.clean
    assert items == [
        LinkEvent(955.9461735, 1796173100.7881217, "streaming", "standard input"),
        Chunk(955.946271877, 1796173100.7882214,
              b"$GPGGA,120000.00,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*67\r\n"),
        Marker(961.2, 1796173106.0, "moved to the ridge"),
    ]
    # the writer makes the same records from those items (times written as Python's shortest repr)
    assert b"".join(fmt.encode(it) for it in items) + fmt.end_record(990.1, 1796173135.0, "closed") \
        == _example().split(b"\n", 1)[1]
