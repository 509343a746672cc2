"""Small reference readers of NMEA logs for the real-receiver acceptance tests, written apart from
livefix so that their figures are independent of it: checksum-valid sentences wherever their '$'
stands, fix times, GGA heights, satellites by constellation (NMEA 0183 rules, named inline); and
what shared/realdata/SOURCES.md states about each log (rate, date, motion, holes)."""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path

_SENTENCE = re.compile(rb"\$([^$*\r\n]*)\*([0-9A-Fa-f]{2})")
FIX_TYPES = ("GGA", "RMC", "GNS", "GLL")  # sentences that carry a time of fix (NMEA 0183)


def strip_b562(data: bytes) -> tuple[bytes, int]:
    """Remove 0xB5 0x62 binary frames (sync bytes, class, id, 2-byte LE length, payload, 8-bit Fletcher sum over
    class..payload: common practice for this binary framing) and count them."""
    out, i, n = bytearray(), 0, 0
    while i < len(data):
        if data[i:i + 2] == b"\xb5\x62" and i + 8 <= len(data):
            end = i + 8 + (data[i + 4] | data[i + 5] << 8)
            if end <= len(data):
                a = b = 0
                for x in data[i + 2:end - 2]:
                    a = (a + x) & 255
                    b = (b + a) & 255
                if data[end - 2] == a and data[end - 1] == b:
                    n, i = n + 1, end
                    continue
        out.append(data[i])
        i += 1
    return bytes(out), n


def valid_sentences(data: bytes) -> list[list[str]]:
    """Fields of every checksum-valid sentence (NMEA 0183: XOR of the bytes between $ and *),
    wherever its $ stands."""
    out = []
    for m in _SENTENCE.finditer(data):
        cs = 0
        for b in m.group(1):
            cs ^= b
        if cs == int(m.group(2), 16):
            out.append(m.group(1).decode("ascii", "replace").split(","))
    return out


def tod(field_: str) -> float | None:
    """hhmmss.ss -> seconds of day (NMEA 0183 time field), None when empty."""
    if len(field_) < 6 or not field_[:6].isdigit():
        return None
    return int(field_[:2]) * 3600 + int(field_[2:4]) * 60 + float(field_[4:])


def stype(f: list[str]) -> str:
    return f[0] if f[0].startswith("P") else f[0][2:]


@dataclass
class Ref:
    sentences: list[list[str]]
    dollar_invalid: int  # '$' outside binary frames that starts no valid sentence
    binary_frames: int
    times: list[float] = field(default_factory=list)  # distinct fix times, unwrapped over midnight
    empty_outside: int = 0  # bursts with an empty time before the first / after the last timed one
    starts_with_fix: bool = False


def read_ref(path: Path) -> Ref:
    raw = path.read_bytes()
    data, nbin = strip_b562(raw)
    sents = valid_sentences(data)
    ref = Ref(sents, data.count(b"$") - len(sents), nbin)
    seq: list[float | None] = []  # fix times in file order, None for an empty time
    primary = "GGA" if any(stype(f) == "GGA" for f in sents) else "RMC"
    day, last = 0.0, None
    for f in sents:
        t = stype(f)
        if t not in FIX_TYPES:
            continue
        x = tod(f[5] if t == "GLL" and len(f) > 5 else f[1])
        if x is not None:
            if last is not None and x < last - 43200:  # crossed midnight (NMEA time of day)
                day += 86400.0
            last = x
            x += day
        if t == primary:
            seq.append(x)
        elif x is not None:
            seq.append(x)
    first = next((f for f in sents if stype(f) in ("GGA", "RMC")), None)
    if first is not None:  # GGA quality > 0 or RMC status A (NMEA 0183)
        ref.starts_with_fix = first[6] not in ("", "0") if stype(first) == "GGA" else first[2] == "A"
    ref.times = sorted({x for x in seq if x is not None})
    timed = [i for i, x in enumerate(seq) if x is not None]
    if timed:
        lead = sum(1 for x in seq[:timed[0]] if x is None)
        trail = sum(1 for x in seq[timed[-1]:] if x is None)
        ref.empty_outside = lead + trail
    return ref


def ref_span(ref: Ref) -> float:
    return ref.times[-1] - ref.times[0]


def gga_heights(ref: Ref) -> list[tuple[float, float]]:
    """(time, ellipsoidal height = MSL height + geoid separation) of GGA with a fix (NMEA 0183 GGA
    fields 9 and 11)."""
    out = []
    for f in ref.sentences:
        if stype(f) == "GGA" and len(f) > 11 and f[6] not in ("", "0") and f[9] and f[11]:
            out.append((tod(f[1]), float(f[9]) + float(f[11])))
    return out


# NMEA satellite-ID ranges for a GP/GN talker (NMEA 0183 before system IDs; "from memory",
# see docs/sources.md#satellite-numbers): 1-32 GPS, 33-64 SBAS, 65-96 GLONASS, 193-202 QZSS, 301-336 Galileo,
# 401-437 BeiDou.
_RANGES = ((1, 32, "G"), (33, 64, "S"), (65, 96, "R"), (193, 202, "J"), (301, 336, "E"), (401, 437, "C"))
_TALKER = {"GL": "R", "GA": "E", "GB": "C", "BD": "C", "GQ": "J", "QZ": "J", "GI": "I"}  # NMEA 0183 talkers


def constellation(talker: str, prn: int) -> str | None:
    if talker in _TALKER:
        return _TALKER[talker]
    for lo, hi, letter in _RANGES:
        if lo <= prn <= hi:
            return letter
    return None


def _gsv_sats(f: list[str]) -> list[tuple[str, int]]:
    """(RINEX letter, number) of the satellites with a C/N0 in one GSV sentence (NMEA 0183: groups
    of number, elevation, azimuth, C/N0 after the three header fields; an optional signal ID last)."""
    out = []
    body = f[4:]
    for k in range(0, len(body) - 3, 4):
        prn, cn0 = body[k], body[k + 3]
        if prn.isdigit() and cn0.strip():
            letter = constellation(f[0][:2], int(prn))
            if letter:
                out.append((letter, int(prn)))
    return out


def gsv_sets(ref: Ref) -> list[set[tuple[str, int]]]:
    """Tracked satellites of each whole GSV set, grouped by part number and total only, whatever
    the talker of each part (a set may span talkers: issue, case 2)."""
    sets, cur, total = [], set(), 0
    for f in ref.sentences:
        if stype(f) != "GSV" or f[0].startswith("P") or not (f[1].isdigit() and f[2].isdigit()):
            continue
        if f[2] == "1":
            cur, total = set(), int(f[1])
        cur |= set(_gsv_sats(f))
        if int(f[2]) == total:
            sets.append(cur)
    return sets


def gsv_tracked(ref: Ref) -> set[tuple[str, int]]:
    """Satellites with a C/N0 in some GSV, as (RINEX letter, number)."""
    out: set[tuple[str, int]] = set()
    for f in ref.sentences:
        if stype(f) == "GSV" and not f[0].startswith("P"):
            out.update(_gsv_sats(f))
    return out


def default_dates(ref: Ref) -> int:
    """Distinct RMC/ZDA dates a receiver emits before it knows the time: up to 1980-01-10 counting
    from the GPS epoch 1980-01-06 (IS-GPS-200) or 2000-01-01 (common practice)."""
    out = set()
    for f in ref.sentences:
        d = f[9] if stype(f) == "RMC" and len(f) > 9 else ""
        if len(d) == 6 and (d[4:] == "80" or d == "010100"):
            out.add(d)
    return len(out)


_ISO = re.compile(r"^(\d{4}-\d{2}-\d{2})T\d{2}:\d{2}")


def iso_dates(node) -> set[str]:
    """Dates of the ISO date-times that place the session: every one in the report except those
    quoting what the receiver claimed (keys starting "receiver", e.g. a refused time)."""
    if isinstance(node, dict):
        return set().union(set(), *(iso_dates(v) for k, v in node.items() if not k.startswith("receiver")))
    if isinstance(node, list):
        return set().union(set(), *(iso_dates(v) for v in node))
    if isinstance(node, str):
        m = _ISO.match(node)
        return {m.group(1)} if m else set()
    return set()


# ---- what SOURCES.md states per file --------------------------------------------------------------
@dataclass(frozen=True)
class Stated:
    rate_hz: float | None  # nominal epoch rate as described
    dates: frozenset[str] = frozenset()  # UTC dates the session lies on; empty = the log has no date
    motion: str | None = None  # "static", "moving" (whole log) or "mostly_moving"
    continuous: bool = False  # no hole, no clock fault, every fix sentence timed


def _d(*s: str) -> frozenset[str]:
    return frozenset(s)


STATED: dict[str, Stated] = {
    "aerorust_nmea1.log": Stated(1, _d("2017-03-31"), "mostly_moving"),
    "aerorust_nmea_with_sat_info.log": Stated(1, _d("2022-04-13"), "static"),
    "gpsanalysis_sample-raw.txt": Stated(1, _d("2017-02-16")),
    "gpscar_nmea_data.txt": Stated(20, _d(), "static", True),
    "gpsodo_GPGGA-PARIS-LIVIC.txt": Stated(1, _d(), "mostly_moving", True),
    "gsvnoise_20220112_test.nmea": Stated(10, _d("2022-01-12"), "static", True),
    "gsvnoise_test.nmea": Stated(10, _d("2022-01-06"), "static", True),
    "ipygps_gps_log2.txt": Stated(1, _d("2022-01-11"), "static"),
    "jamming_rtk_serial_output.txt": Stated(5, _d("2019-10-01"), "static", True),
    "mphw_190110.LOG": Stated(1, _d("2019-01-10"), "static", True),
    "nematode_nmea_log.txt": Stated(None, _d("2011-05-28")),
    "nmeadataset_5.GPS-20170525T225915.txt": Stated(1, _d("2017-05-25"), "static"),
    "nmealayer_test.nmea": Stated(1, _d("2016-04-11"), "mostly_moving", True),
    "nmeaparser_NmeaSampleData.txt": Stated(0.5, _d("2005-09-25", "2005-09-26"), "mostly_moving"),
    "nmeaparser_R2SampleData.txt": Stated(1, _d("2017-12-20"), None, True),
    "perlnmea_log-2013-02-16-23-16.nmea": Stated(1, _d("2013-02-16"), "static", True),
    "pynmeagps_pygpsdata-mixed.log": Stated(None, _d(), None, True),
    "pysandbox_2020-10-04_20-24.nmea": Stated(1, _d("2020-10-04")),
    "pyubx2_2023-4-17_82912_serial-COM3.ubx": Stated(1, _d("2023-04-17")),
    "ratatosk_nmea_log.txt": Stated(1, _d("2025-06-19"), "static"),
    "sprayerbot_nmea_log.txt": Stated(1, _d("2019-06-27"), "mostly_moving", True),
    "zxcwhale_nmea.txt": Stated(1, _d("2016-07-29"), "moving", True),
}
FILES = sorted(STATED)

# Holes SOURCES.md describes (no line at all for that long): a gap in the data, reported once.
HOLES_S = {
    "ratatosk_nmea_log.txt": (116,),
    "nmeaparser_NmeaSampleData.txt": (60, 798, 1250),
    "ipygps_gps_log2.txt": (28, 48, 207),
}
