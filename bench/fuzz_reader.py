"""Random recordings for the differential of the C record scan (livefix/record/_reccore.c) against the
reference (livefix/record/reader.py RecordingReader._part), used by tests/record/test_reader_native.py
and by bench/fuzz.py (`make fuzz`, under the sanitizers). Deterministic for a seed.

recording() writes records as the recorder does (Chunk, LinkEvent and Marker records with any payload
bytes, end records) and, now and then, heads the reference takes although the writer never makes them
(other number forms, unknown kinds); mutate() damages a file (flipped, cut, inserted, dropped bytes).
Each file is read, plain or gzip-compressed, alone or as a rotated set, with read blocks of random size,
once through the C scan and once through the reference, and the two readings compared: every item
(type, floats by float.hex, payload bytes), the damage text, the record count, `clean`, the parts read.
"""

from __future__ import annotations

import gzip
import random
import tempfile
import zlib
from pathlib import Path
from typing import Any

from fuzz_twins import load_ext

from livefix.items import Chunk, LinkEvent, Marker
from livefix.record import fmt, reader

NUM_ODD = ["inf", "-inf", "nan", "1e999", "\t1.5", "1_0.5", ".5", "5.", "+2.0", "0x1p3", "", "1.5.2", "1e", "--1",
           "9" * 45, "0." + "1" * 45]
BLOCKS = [1, 2, 7, 64, 127, 128, 129, 1000, 4096, reader.SCAN_BLOCK]


def _num(rnd: random.Random, x: float) -> str:
    r = rnd.random()
    if r < 0.9:
        return repr(x)
    if r < 0.94:
        return rnd.choice([f"{x:.3e}", f"{x:E}", f"{x:.0f}", f"{x:.20f}", f"{-x!r}", "-0.0", "0"])
    return rnd.choice(NUM_ODD)


def _count(rnd: random.Random, n: int) -> str:
    r = rnd.random()
    if r < 0.95:
        return str(n)
    return rnd.choice([f"0{n}", f"+{n}", f"{n} ", f"{n + 1}", f"{max(0, n - 1)}", "-1", str(fmt.MAX_RECORD_LINE << 20),
                       "1_0", "", "99999999999", "x"])


def _crc(rnd: random.Random, c: int) -> str:
    r = rnd.random()
    if r < 0.95:
        return f"{c:08x}"
    return rnd.choice([f"{c:08X}", f"{c:x}", f"0x{c:x}", f"+{c:x}", f"{c:08x}\r", f"{c ^ 1:08x}", f"0{c:08x}",
                       f"{c:09x}", "", "zz"])


def _payload(rnd: random.Random) -> bytes:
    r = rnd.random()
    if r < 0.5:
        return b"$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,*47\r\n" * rnd.randrange(0, 4)
    if r < 0.9:
        return rnd.randbytes(rnd.randrange(0, 200))
    if r < 0.97:  # bytes that look like records, inside a payload
        return rnd.choice([b"\n@D 1 2 3 00000000\n", b"@E 1 2 0 00000000\n", b"\n", b"@"]) * rnd.randrange(1, 4)
    return rnd.randbytes(rnd.randrange(5000, 70000))  # spans read blocks


def _record(rnd: random.Random, mono: float, wall: float) -> bytes:
    r = rnd.random()
    payload = _payload(rnd)
    if r < 0.8:
        kind = "D"
    elif r < 0.87:
        kind, payload = "L", rnd.choice([b"streaming", b"lost read error: EIO", b"stalled  two spaces", b"\xff\xfe x",
                                         b"", b" lead", b"ended"])
    elif r < 0.93:
        kind, payload = "M", rnd.choice(["moved antenna é".encode(), b"\xc3", b"", b"a\nb"])
    elif r < 0.96:
        kind = rnd.choice(["X", "d", "~", "0", "@", "E"])
    else:
        kind = rnd.choice(["DD", "", " ", "\u00e9", "\x7f", "\x01"])
    head = (f"@{kind} {_num(rnd, mono)} {_num(rnd, wall)} {_count(rnd, len(payload))} "
            f"{_crc(rnd, zlib.crc32(payload))}\n")
    if rnd.random() < 0.01:
        head = head.replace(" ", "  ", 1) if rnd.random() < 0.5 else head[:-1] + " x" * 80 + "\n"
    return head.encode("utf-8") + payload + (b"\n" if rnd.random() > 0.005 else b"\r")


def recording(rnd: random.Random, end: bool | None = None) -> bytes:
    """One recording's bytes: the header line, then records (an end record last when `end`)."""
    out = [fmt.header_line({"source": "fuzz"})]
    mono, wall = rnd.uniform(0, 1e6), rnd.uniform(1.6e9, 1.8e9)
    for _ in range(rnd.choice([0, 1, 3, 10, 40])):
        mono += rnd.random() * rnd.choice([0.1, 1.0, 1e-9])
        wall += rnd.random() * 0.1
        out.append(_record(rnd, mono, wall))
    if end if end is not None else rnd.random() < 0.5:
        out.append(fmt.end_record(mono, wall, "closed"))
    return b"".join(out)


def mutate(rnd: random.Random, data: bytes) -> bytes:
    """data with one to three faults: a flipped, inserted or dropped byte, a cut, a head damaged."""
    b = bytearray(data)
    for _ in range(rnd.randrange(1, 4)):
        if not b:
            break
        at = rnd.randrange(len(b))
        op = rnd.random()
        if op < 0.3:
            b[at] ^= 1 << rnd.randrange(8)
        elif op < 0.5:
            del b[at:]
        elif op < 0.65:
            b[at:at] = bytes([rnd.choice([10, 32, 64, 48, rnd.randrange(256)])])
        elif op < 0.8:
            del b[at:at + rnd.randrange(1, 20)]
        else:
            b[at] = rnd.choice(b"@ \n.e-+0123456789abcdefDLMEX")
    return bytes(b)


def _gzip(rnd: random.Random, data: bytes) -> bytes:
    """gzip of data: one member or several (as appends make), now and then cut or with a flipped byte."""
    cuts = sorted(rnd.randrange(len(data) + 1) for _ in range(rnd.choice([0, 0, 1, 2])))
    parts = [data[a:b] for a, b in zip([0, *cuts], [*cuts, len(data)], strict=True)]
    z = bytearray(b"".join(gzip.compress(p, mtime=0) for p in parts))
    r = rnd.random()
    if r < 0.1:
        del z[rnd.randrange(len(z)):]
    elif r < 0.2:
        z[rnd.randrange(10, len(z))] ^= 1 << rnd.randrange(8)
    return bytes(z)


def make_case(rnd: random.Random, folder: Path, k: int) -> Path:
    """A recording on disk (maybe damaged, compressed, or rotated into parts): the path to read."""
    for old in folder.glob(f"c{k}.*"):  # no stale part of an earlier case
        old.unlink()
    parts = rnd.choice([1, 1, 1, 2, 3])
    gz = rnd.random() < 0.2
    first = None
    for i in range(1, parts + 1):
        data = recording(rnd, end=True if i < parts and rnd.random() < 0.9 else None)
        if rnd.random() < 0.5:
            data = mutate(rnd, data)
        if gz:
            data = _gzip(rnd, data)
        p = folder / (f"c{k}.{i:04d}.lfr" + (".gz" if gz else "")) if parts > 1 else folder / f"c{k}.lfr"
        p.write_bytes(data)
        first = first or p
    assert first is not None
    return first


def _key(it: Any) -> tuple:
    t = type(it)
    if t is Chunk:
        rest: tuple = (it.data,)
    elif t is LinkEvent:
        rest = (it.state, it.detail)
    elif t is Marker:
        rest = (it.note,)
    else:
        rest = (repr(it),)
    return (t.__name__, type(it.mono).__name__, float(it.mono).hex(), float(it.wall).hex(), *rest)


def read(path: Path, native: bool) -> tuple[Any, int]:
    """Everything a reading gives (items, damage, records, clean, parts; or the error raised), and
    how many times the reference read a part (for the C scan: its hand-backs)."""
    r = reader.RecordingReader(path, native=native)
    handed = 0
    ref = r._part

    def part(p: Path):  # noqa: ANN202 - the reference, counted
        nonlocal handed
        handed += 1
        return (yield from ref(p))

    r._part = part  # type: ignore[method-assign]
    try:
        items = [_key(it) for it in r.items()]
    except Exception as exc:  # noqa: BLE001 - both paths must fail alike
        return ("raised", type(exc).__name__, str(exc)), handed
    return (items, r.damage, r.records, r.clean, [p.name for p in r.paths]), handed


def compare(path: Path, block: int | None = None) -> tuple[str | None, bool]:
    """(what differs between the C scan and the reference on this file, or None; whether the C scan
    handed a part back), with the scan reading `block` bytes at a time."""
    saved = reader.SCAN_BLOCK
    reader.SCAN_BLOCK = block or saved
    try:
        c, handed = read(path, True)
        ref, _ = read(path, False)
    finally:
        reader.SCAN_BLOCK = saved
    if c != ref:
        return f"{path.name} (block {block}): C {str(c)[:300]} | reference {str(ref)[:300]}", handed > 0
    return None, handed > 0


def diff(n: int, seed: int) -> tuple[int, int, int, list[str]]:
    """n random recordings through both paths: (compared, handed back, disagreements, first examples)."""
    rnd = random.Random(seed)
    handed = bad = 0
    examples: list[str] = []
    with tempfile.TemporaryDirectory(prefix="livefix-fuzz-reader-") as tmp:
        for k in range(n):
            path = make_case(rnd, Path(tmp), k % 50)
            why, back = compare(path, rnd.choice(BLOCKS))
            handed += back
            if why is not None:
                bad += 1
                if len(examples) < 3:
                    examples.append(why)
    return n, handed, bad, examples


def load_rec_core(path: str) -> None:
    """Use the core built at `path` (the sanitizer build) as livefix.record._reccore."""
    import livefix.record

    mod = load_ext("livefix.record._reccore", path)
    livefix.record._reccore = mod  # type: ignore[attr-defined]
    reader._CORE = mod
