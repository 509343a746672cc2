"""Fast field decoding for the eight sentence types a GNSS receiver sends every epoch.

The output must equal the public attributes pynmeagps 1.1.8 sets for the same payload, so that the
state model cannot tell which path served a line. pynmeagps walks its payload definition one
attribute at a time; the rules reproduced here are:
  * attributes are taken in definition order; when the payload runs out the rest are simply absent,
    and payload fields beyond the definition are dropped;
  * "" stays "" for every type; IN -> int(), DE -> float() (a ValueError refuses the whole line);
  * LA/LN -> round(abs(deg) + min / 60, 10) or "" when unreadable; the N/S and E/W field then sets
    the sign (only if the value is a number);
  * TM -> datetime.time via strptime("%H%M%S.%f") ("" when invalid); DT -> date via "%d%m%y";
  * GSV carries int((len(payload) - 3) / 4) satellite blocks, then signalID (a string) if any
    field is left.
Field texts repeat a lot (units, flags, satellite numbers, the epoch time in four sentences), so
every conversion goes through a bounded str -> value cache (one set per Decoder, fast_decoders);
a decode is then a few C-level calls.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from datetime import date, time
from typing import Any

from pynmeagps.nmeahelpers import date2utc, time2utc

from livefix.timefmt import year_from_yy

__all__ = ["DEFS", "FAST_TYPES", "GSV_NAMES", "fast_decoders", "parse_time", "parse_date", "parse_latlon"]

_CACHE_MAX = 4096  # entries per conversion cache; cleared when full (bounded memory)


def parse_time(s: str) -> time | str:
    """NMEA hhmmss[.f{1,6}] -> time, as pynmeagps time2utc; uncommon shapes go to time2utc itself."""
    r = None
    n = len(s)
    if (n == 6 or (8 <= n <= 13 and s[6] == "." and s[7:].isdigit())) and s[:6].isdigit():
        hh, mm, ss = int(s[0:2]), int(s[2:4]), int(s[4:6])
        if hh < 24 and mm < 60 and ss < 60:
            r = time(hh, mm, ss, int(s[7:].ljust(6, "0")) if n > 6 else 0)
    return time2utc(s) if r is None else r  # the reference behaviour for everything unusual


def parse_date(s: str) -> date | str:
    """NMEA ddmmyy -> date, as pynmeagps date2utc (years 69-99 are 19xx, 00-68 are 20xx)."""
    r = None
    if len(s) == 6 and s.isdigit():
        dd, mo, yy = int(s[0:2]), int(s[2:4]), int(s[4:6])
        if 1 <= dd <= 31 and 1 <= mo <= 12:
            try:
                r = date(year_from_yy(yy), mo, dd)  # the one pivot, livefix.timefmt.YY_PIVOT
            except ValueError:
                r = ""
    return date2utc(s) if r is None else r


def parse_latlon(s: str) -> float | str:
    """(d)ddmm.mmmm -> unsigned degrees, the same arithmetic as pynmeagps dmm2ddd.

    round(v, 10) is slow (decimal conversion); v*1e10 rounded to an integer and divided back is
    the same double whenever v*1e10 is not within 0.001 of a half (IEEE division is correctly
    rounded and 1e10 is exact), so only near-ties and odd magnitudes take round() itself.
    """
    dp = s.find(".")
    if dp < 4:
        return ""
    try:
        v = abs(float(s[0 : dp - 2])) + float(s[dp - 2 :]) / 60
    except ValueError:
        return ""
    y = v * 1e10
    if -8e12 < y < 8e12:
        r = round(y)
        if r and -0.499 < y - r < 0.499:
            return r / 1e10
    return round(v, 10)


class _Cache(dict):
    """str -> converted value; a miss converts (ValueError propagates) and stores, bounded."""

    __slots__ = ("conv",)

    def __init__(self, conv: Callable[[str], Any]) -> None:
        super().__init__()
        self.conv = conv

    def __missing__(self, key: str) -> Any:
        v = self.conv(key)
        if len(self) >= _CACHE_MAX:
            self.clear()
        self[key] = v
        return v


def _int(s: str) -> int | str:
    return int(s) if s else ""


def _float(s: str) -> float | str:
    return float(s) if s else ""


def _str(s: str) -> str:
    return s


Conv = Callable[[str], Any]
# Conversion kinds; each decoder set gets its own bounded cache per kind (see fast_decoders).
_TM, _LA, _IN, _DE, _CH, _DT = (parse_time, parse_latlon, _int, _float, _str, parse_date)

# Payload definitions (name, conversion), in pynmeagps order (nmeatypes_get.py). The C core
# (livefix/_native.c) holds the same table; tests/decode/test_native_identity.py compares them.
DEFS: dict[str, tuple[tuple[str, Conv], ...]] = {
    "GGA": (("time", _TM), ("lat", _LA), ("NS", _CH), ("lon", _LA), ("EW", _CH), ("quality", _IN),
            ("numSV", _IN), ("HDOP", _DE), ("alt", _DE), ("altUnit", _CH), ("sep", _DE),
            ("sepUnit", _CH), ("diffAge", _DE), ("diffStation", _IN)),
    "RMC": (("time", _TM), ("status", _CH), ("lat", _LA), ("NS", _CH), ("lon", _LA), ("EW", _CH),
            ("spd", _DE), ("cog", _DE), ("date", _DT), ("mv", _DE), ("mvEW", _CH), ("posMode", _CH),
            ("navStatus", _CH)),
    "GSA": (("opMode", _CH), ("navMode", _IN))
    + tuple((f"svid_{i:02d}", _IN) for i in range(1, 13))
    + (("PDOP", _DE), ("HDOP", _DE), ("VDOP", _DE), ("systemId", _CH)),
    "GST": (("time", _TM), ("rangeRms", _DE), ("stdMajor", _DE), ("stdMinor", _DE), ("orient", _DE),
            ("stdLat", _DE), ("stdLong", _DE), ("stdAlt", _DE)),
    "VTG": (("cogt", _DE), ("cogtUnit", _CH), ("cogm", _DE), ("cogmUnit", _CH), ("sogn", _DE),
            ("sognUnit", _CH), ("sogk", _DE), ("sogkUnit", _CH), ("posMode", _CH)),
    "ZDA": (("time", _TM), ("day", _IN), ("month", _IN), ("year", _IN), ("ltzh", _CH), ("ltzn", _CH)),
    "GNS": (("time", _TM), ("lat", _LA), ("NS", _CH), ("lon", _LA), ("EW", _CH), ("posMode", _CH),
            ("numSV", _IN), ("HDOP", _DE), ("alt", _DE), ("sep", _DE), ("diffAge", _DE),
            ("diffStation", _IN), ("navStatus", _CH)),
}
_MAX_BLOCKS = 99  # pynmeagps names beyond _99 get three digits; such lines go to the fallback


def _gsv_names() -> tuple[tuple[str, ...], ...]:
    """GSV_NAMES[k]: the field names of a GSV line with k satellite blocks. Each is the one before
    plus one block, so start-up formats 396 names, not the 19,800 of all the tuples."""
    out = [("numMsg", "msgNum", "numSV")]
    for i in range(1, _MAX_BLOCKS + 1):
        out.append(out[-1] + tuple(f"{a}_{i:02d}" for a in ("svid", "elv", "az", "cno")))
    return tuple(out)


GSV_NAMES = _gsv_names()
_getitem = dict.__getitem__
_DECIMAL_CN0 = re.compile(r"[0-9]{1,2}\.[0-9]{1,3}")  # dd.d: within the field's 00-99 dB-Hz


def _gsv_decoder(in_get: Callable[[str], Any]) -> Callable[[list[str]], dict[str, Any]]:
    def gsv(p: list[str]) -> dict[str, Any]:
        n = len(p)
        if n < 3:
            return dict(zip(GSV_NAMES[0], map(in_get, p), strict=False))
        k = (n - 3) >> 2
        if k > _MAX_BLOCKS:
            raise OverflowError("too many satellite blocks")  # the caller falls back to pynmeagps
        # zip stops at the names, so a trailing signalID is never converted as an int.
        try:
            d = dict(zip(GSV_NAMES[k], map(in_get, p), strict=False))
        except ValueError:
            d = _gsv_decimal_cn0(p, k, in_get)  # raises ValueError again unless only C/N0 had decimals
        j = 3 + 4 * k
        if j < n:
            d["signalID"] = p[j]
        return d

    return gsv


def _cn0(s: str, in_get: Callable[[str], Any]) -> int | float | str:
    """C/N0 as written: whole dB-Hz (the NMEA 0183 field is an integer 00-99), or with decimals as
    some receivers write it (e.g. 48.4); the decimals are kept, they carry real information."""
    try:
        return in_get(s)
    except ValueError:
        if _DECIMAL_CN0.fullmatch(s) is None:
            raise
        return float(s)


def _gsv_decimal_cn0(p: list[str], k: int, in_get: Callable[[str], Any]) -> dict[str, Any]:
    """A GSV whose C/N0 fields carry decimals. The reference decoder refuses the whole line; that
    would empty the sky of a receiver that is working fine, so this one deviation is deliberate and
    tested (tests/decode/test_decode_fields.py). Every other field keeps the strict rules."""
    names = GSV_NAMES[k]
    return {n: (_cn0(v, in_get) if i >= 3 and (i - 3) % 4 == 3 else in_get(v))
            for i, (n, v) in enumerate(zip(names, p, strict=False))} | (
        {"signalID": p[3 + 4 * k]} if 3 + 4 * k < len(p) else {})


def _plan_decoder(defs: tuple[tuple[str, Conv], ...], caches: dict[Conv, _Cache]) -> Callable[[list[str]], dict]:
    names = tuple(n for n, _ in defs)
    convs = tuple(caches[c] for _, c in defs)
    if "NS" not in names:
        def dec(p: list[str]) -> dict[str, Any]:
            return dict(zip(names, map(_getitem, convs, p), strict=False))

        return dec
    ns, ew = names.index("NS"), names.index("EW")

    def dec_signed(p: list[str]) -> dict[str, Any]:
        d = dict(zip(names, map(_getitem, convs, p), strict=False))
        n = len(p)
        if n > ns:  # N/S and E/W set the sign as pynmeagps does: -abs / abs, numbers only
            lat = d["lat"]
            if lat.__class__ is float:
                d["lat"] = -abs(lat) if p[ns] == "S" else abs(lat)
            if n > ew:
                lon = d["lon"]
                if lon.__class__ is float:
                    d["lon"] = -abs(lon) if p[ew] == "W" else abs(lon)
        return d

    return dec_signed


FAST_TYPES = frozenset(DEFS) | {"GSV"}


def fast_decoders() -> dict[str, Callable[[list[str]], dict[str, Any]]]:
    """One field decoder per fast type, sharing a fresh set of bounded conversion caches.

    Each Decoder owns its set (issue 14: caches belong to the pipeline instance, so two pipelines
    in one process never share or evict each other's entries). Each cache holds at most
    _CACHE_MAX entries; the conversions are pure functions of the text, so a cache changes no value.
    """
    caches = {c: _Cache(c) for c in (_TM, _LA, _IN, _DE, _CH, _DT)}
    out = {k: _plan_decoder(v, caches) for k, v in DEFS.items()}
    out["GSV"] = _gsv_decoder(caches[_IN].__getitem__)
    return out


