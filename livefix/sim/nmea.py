"""NMEA 0183 (4.11 layout) sentence builders for the simulator: fixed zero padding, own checksum.

Built by hand rather than by a library serializer so that the bytes are exact and reproducible
(placeholders and padding would otherwise vary). Empty fields stay empty, as receivers write them.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Iterable, Sequence

from livefix.checksum import checksum_hex

# RINEX letter -> GSV talker and NMEA 4.10+ system id (docs/sources.md#system-ids).
TALKER = {"G": "GP", "R": "GL", "E": "GA", "C": "GB"}
SYSTEM_ID = {"G": 1, "R": 2, "E": 3, "C": 4}
# GSV signal id we emit per system: GPS L1 C/A, GLONASS G1 C/A, Galileo E1-BC (docs/sources.md#signal-ids, from memory),
# BeiDou B1I (from memory).
SIGNAL_ID = {"G": "1", "R": "1", "E": "7", "C": "1"}
# Fix-type name -> (GGA quality, RMC/VTG mode); quality codes per docs/sources.md#gga-quality (3-8 from memory).
MODES = {"none": (0, "N"), "single": (1, "A"), "dgnss": (2, "D"), "rtk_float": (5, "F"), "rtk_fixed": (4, "R")}


checksum = checksum_hex  # the sentence writers below and the receiver's command parser use this name


def sentence(body: str) -> bytes:
    return f"${body}*{checksum(body)}\r\n".encode("ascii")


def _time(d: _dt.datetime) -> str:
    return f"{d.hour:02d}{d.minute:02d}{d.second:02d}.{d.microsecond // 10000:02d}"


def _angle(v: float | None, deg_width: int, pos: str, neg: str) -> str:
    """Degrees as NMEA dddmm.mmmmmm,H (6 decimal minutes, about 2 mm), zero-padded."""
    if v is None:
        return ","
    a = abs(v)
    deg = int(a)
    mins = round((a - deg) * 60.0, 6)
    if mins >= 60.0:
        deg, mins = deg + 1, 0.0
    return f"{deg:0{deg_width}d}{mins:09.6f},{pos if v >= 0 else neg}"


def _lat(lat: float | None) -> str:
    return _angle(lat, 2, "N", "S")


def _lon(lon: float | None) -> str:
    return _angle(lon, 3, "E", "W")


def _f(v: float | None, nd: int) -> str:
    return "" if v is None else f"{v:.{nd}f}"


# Latitude/longitude with 6 decimal minutes (1.9 mm) and a 1-decimal separation keep an RTK GGA
# within the 86 characters receivers are seen to reach (docs/sources.md#sentence-length).
def gga(tk: str, d: _dt.datetime, fix: str, lat: float | None, lon: float | None, alt: float | None,
        sep: float, num_sv: int, hdop: float | None, age: float | None, station: int | None) -> bytes:
    q = MODES[fix][0]
    alt_s = f"{_f(alt, 3)},M,{sep:.1f},M" if alt is not None else ",M,,M"
    st = "" if station is None else f"{station:04d}"
    return sentence(f"{tk}GGA,{_time(d)},{_lat(lat)},{_lon(lon)},{q},{num_sv:02d},{_f(hdop, 2)},"
                    f"{alt_s},{_f(age, 1)},{st}")


def rmc(tk: str, d: _dt.datetime, fix: str, lat: float | None, lon: float | None,
        sog_kn: float | None, cog: float | None) -> bytes:
    mode = MODES[fix][1]
    status, nav = ("V", "V") if fix == "none" else ("A", "S")
    return sentence(f"{tk}RMC,{_time(d)},{status},{_lat(lat)},{_lon(lon)},{_f(sog_kn, 3)},{_f(cog, 1)},"
                    f"{d.day:02d}{d.month:02d}{d.year % 100:02d},,,{mode},{nav}")


def vtg(tk: str, fix: str, sog_kn: float | None, cog: float | None) -> bytes:
    kmh = None if sog_kn is None else sog_kn * 1.852
    return sentence(f"{tk}VTG,{_f(cog, 1)},T,,M,{_f(sog_kn, 3)},N,{_f(kmh, 3)},K,{MODES[fix][1]}")


def gsa(tk: str, fix_dim: int, prns: Sequence[int], pdop: float | None, hdop: float | None,
        vdop: float | None, system: str) -> bytes:
    slots = [f"{p:02d}" for p in list(prns)[:12]] + [""] * max(0, 12 - len(prns))
    return sentence(f"{tk}GSA,A,{fix_dim},{','.join(slots)},{_f(pdop, 2)},{_f(hdop, 2)},{_f(vdop, 2)},"
                    f"{SYSTEM_ID[system]}")


def gsv(system: str, sats: Sequence[tuple[int, int, int, int | None]]) -> list[bytes]:
    """GSV set for one system and signal: sats are (prn, elev, azim, cn0 or None), 4 per sentence."""
    tk, sig = TALKER[system], SIGNAL_ID[system]
    total = max(1, (len(sats) + 3) // 4)
    out = []
    for k in range(total):
        group = sats[4 * k:4 * k + 4]
        parts = [f"{p:02d},{e:02d},{a:03d},{'' if c is None else f'{c:02d}'}" for p, e, a, c in group]
        body = f"{tk}GSV,{total},{k + 1},{len(sats):02d}"
        if parts:
            body += "," + ",".join(parts)
        out.append(sentence(f"{body},{sig}"))
    return out


def gst(tk: str, d: _dt.datetime, rms: float, s_lat: float, s_lon: float, s_alt: float) -> bytes:
    major, minor = max(s_lat, s_lon), min(s_lat, s_lon)
    orient = 0.0 if s_lat >= s_lon else 90.0
    return sentence(f"{tk}GST,{_time(d)},{rms:.3f},{major:.3f},{minor:.3f},{orient:.1f},"
                    f"{s_lat:.3f},{s_lon:.3f},{s_alt:.3f}")


def zda(tk: str, d: _dt.datetime) -> bytes:
    return sentence(f"{tk}ZDA,{_time(d)},{d.day:02d},{d.month:02d},{d.year:04d},00,00")


def txt(tk: str, texts: Sequence[str]) -> list[bytes]:
    """TXT (NMEA 0183 4.10: total, number, text identifier 02 = notice, text), one per text."""
    n = len(texts)
    return [sentence(f"{tk}TXT,{n:02d},{i:02d},02,{t}") for i, t in enumerate(texts, 1)]


def ack(kind: str) -> bytes:
    """Our proprietary acknowledgement of a restart command."""
    return sentence(f"PLFX,ACK,RESET,{kind.upper()}")


# ----- reading our own sentences back (for the dialects, livefix.sim.dialects) ------------------
def split(s: bytes) -> tuple[str, list[str]] | None:
    """(address, fields) of a '$' sentence, or None for anything else."""
    if not s.startswith(b"$") or b"*" not in s:
        return None
    body = s[1:s.rindex(b"*")].decode("ascii", "replace")
    addr, *fields = body.split(",")
    return addr, fields


def join(addr: str, fields: Iterable[str]) -> bytes:
    """A sentence from its address and fields, with its checksum."""
    return sentence(",".join((addr, *fields)))


def kind(s: bytes) -> str:
    """Sentence formatter ('GGA') of a standard sentence; '' for proprietary and non-NMEA."""
    return s[3:6].decode("ascii", "replace") if s[:1] == b"$" and s[1:2] != b"P" and len(s) > 6 else ""


def drop(parts: list[bytes], kinds: Sequence[str]) -> list[bytes]:
    return [p for p in parts if kind(p) not in kinds]


def centiseconds(time_field: str) -> int | None:
    """'hhmmss.ss' -> centiseconds of day."""
    try:
        h, m, s = int(time_field[:2]), int(time_field[2:4]), float(time_field[4:])
    except ValueError:
        return None
    return (h * 3600 + m * 60) * 100 + round(s * 100)


def time_field(cs: int) -> str:
    """Centiseconds of day -> 'hhmmss.ss' (wrapping at midnight)."""
    s, c = divmod(cs % 8_640_000, 100)
    return f"{s // 3600:02d}{s // 60 % 60:02d}{s % 60:02d}.{c:02d}"
