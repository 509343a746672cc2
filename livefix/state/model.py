"""StateModel: the one writer of receiver state. Decoded sentences in, completed Epochs out.

Why epochs by time of fix: receivers send one burst of sentences per solution, but which sentence
comes first differs between receivers. Grouping by the UTC time the sentences carry (untimed GSA,
GSV and VTG join the open epoch) works for any order. Everything here is bounded: the open epoch,
the GSV parts, the sky and the event queue all have caps, so memory does not grow with time.
"""

from __future__ import annotations

import datetime as _dt
from typing import Any

from livefix.decode import Decoded, Rejected
from livefix.items import Link, LinkEvent, Marker
from livefix.state import model_native
from livefix.state.clock import UtcClock
from livefix.state.epoch import Epoch, Event, SatObs, make_epoch
from livefix.state.fieldvals import NONE as _NONE
from livefix.state.fieldvals import NUM as _NUM
from livefix.state.fieldvals import datum as _datum
from livefix.state.fieldvals import first as _first
from livefix.state.fieldvals import num as _num
from livefix.state.gsv import make_assembler
from livefix.state.sky import make_sky
from livefix.state.texts import ReceiverTexts
from livefix.state.used import TRACKER_TYPES, make_used_tracker, solution_gsa

# Sentence types whose time field is the UTC time of a position fix: only these open and close
# epochs (NMEA 0183: GGA, RMC, GNS and GLL report a fix "as of" that time). ZDA is a clock/date
# sentence that some receivers stamp tens of ms after the fix, and GST belongs to a fix only when its
# time matches one, so both join the epoch in progress like the untimed GSA, GSV, VTG and TXT.
TIMED = frozenset({"GGA", "RMC", "GNS", "GLL"})
# Sentences that carry a time but do not define an epoch: their time is read for what it is.
CLOCK_ONLY = frozenset({"ZDA", "GST"})
# Position sources in order of preference.
POSITION_FROM = ("GGA", "GNS", "RMC", "GLL")
# RMC/GNS/GLL mode letter -> GGA quality (NMEA 0183: A, D, E, N verified; F, R, M, S, P from memory,
# see docs/sources.md#mode-letters).
MODE_QUALITY: dict[str, int] = {"A": 1, "D": 2, "P": 3, "R": 4, "F": 5, "E": 6, "M": 7, "S": 8, "N": 0}
# GNS gives one mode letter per constellation: the best of them describes the solution.
MODE_RANK: dict[str, int] = {m: i for i, m in enumerate("NSMEAPDFR")}
KNOT_MPS = 1852.0 / 3600.0  # international nautical mile per hour
UNTIMED_GAP_S = 2.0  # an epoch without any time closes when a sentence arrives this much later
MAX_SENTENCES = 64  # per epoch, for the `sentences` list
MAX_EVENTS = 1000  # undrained events kept
GSV_EVENT_EVERY_S = 30.0  # rate limit of "gsv_incomplete" events

TXT_PER_S = 2  # receiver text events per second of stream at most
TXT_MAX = 120  # characters of receiver text kept in an event

# A marker note starting with this says livefix itself restarted the receiver at that moment; it is
# recorded like any marker, so a replay sees the restart at the same place in the stream.
RESTART_NOTE = "receiver restart"


class _Open:
    """The epoch being assembled."""

    __slots__ = ("mono", "wall", "tod", "timed_keys", "by_type", "used", "date", "date_tod", "sentences")

    def __init__(self, mono: float, wall: float, tod: float | None) -> None:
        self.mono, self.wall, self.tod = mono, wall, tod
        self.timed_keys: set[str] = set()
        self.by_type: dict[str, dict[str, Any]] = {}
        self.used: set[tuple[str, int]] = set()
        self.date: _dt.date | None = None
        self.date_tod: float | None = None  # time of day the date was stated for (ZDA), None = the fix's
        self.sentences: list[str] = []


class StateModel:
    def __init__(self, sky_timeout_s: float = 5.0, native: bool | None = None) -> None:
        self._open: _Open | None = None
        self._clock = UtcClock()
        self._gsv = make_assembler()  # the C twin when built (livefix/state/_gsvcore.c)
        self._gsa = make_used_tracker()  # GSA used lists of the open epoch (the C twin when built)
        self._sky = make_sky(sky_timeout_s)  # the C twin when built (livefix/state/_skycore.c)
        self._used: frozenset[tuple[str, int]] = frozenset()
        self._used_sorted: tuple[tuple[str, int], ...] = ()
        self._events: list[Event] = []
        self._link: tuple[str, float, str] = (Link.CONNECTING, 0.0, "")
        self._link_seen = False
        self._mono = 0.0
        self._wall = 0.0
        self.last_epoch: Epoch | None = None
        self.epochs = 0
        self.late = 0  # timed sentences that arrived after their epoch had closed
        self.txt_suppressed = 0  # TXT sentences over the rate cap
        self.texts = ReceiverTexts()  # distinct TXT texts: their first sights pass the cap
        self._txt_window, self._txt_in_window = float("-inf"), 0
        self._closed_tod: float | None = None
        self.rejected: dict[str, int] = {}
        self.events_dropped = 0
        self._gsv_unreported = 0
        self._gsv_last_event: float | None = None
        self._gst_ahead: tuple[float, Any] | None = None  # a GST for a time not yet open
        self._tod_of: object = None  # the last time-of-fix object seen, and its seconds of day
        self._tod: float | None = None
        model_native.attach(self, _CORE, _CORE_HELPERS, native)  # on_sentence/_close in C when built

    # -- stream items --------------------------------------------------------------------
    @property
    def link(self) -> tuple[str, float, str]:
        """(state, since_mono, detail) of the connection."""
        return self._link

    def on_link(self, ev: LinkEvent) -> None:
        self._mono, self._wall = ev.mono, ev.wall
        state, since, detail = self._link
        if self._link_seen and (ev.state, ev.detail) == (state, detail):
            return  # a repeat says nothing new
        if not self._link_seen or ev.state != state:
            since = ev.mono
        self._link, self._link_seen = (ev.state, since, ev.detail), True
        text = f"link {ev.state}" + (f": {ev.detail}" if ev.detail else "")
        self._emit(ev.mono, ev.wall, "link", text, data={"state": ev.state, "detail": ev.detail})

    def on_marker(self, m: Marker) -> None:
        self._mono, self._wall = m.mono, m.wall
        self._emit(m.mono, m.wall, "marker", m.note, data={"note": m.note})
        if m.note.startswith(RESTART_NOTE):  # livefix restarted the receiver itself (TTFF cycles)
            self._emit(m.mono, m.wall, "receiver_restart", m.note, data={"note": m.note})

    def on_chunk(self, mono: float, wall: float) -> None:
        self._mono, self._wall = mono, wall

    def on_rejected(self, r: Rejected, mono: float, wall: float) -> None:
        self._mono, self._wall = mono, wall
        self.rejected[r.reason] = self.rejected.get(r.reason, 0) + 1

    def add_event(self, kind: str, text: str, mono: float, wall: float, data: dict | None = None) -> None:
        """Events from outside the stream (the session's recording start/stop, notes)."""
        self._emit(mono, wall, kind, text, data=data or {})

    def on_sentence(self, msg: Decoded, mono: float, wall: float) -> list[Epoch] | tuple[()]:
        """One decoded sentence; returns the epochs it completed (usually none: the shared `()`)."""
        self._mono, self._wall = mono, wall
        if msg.proprietary:
            return ()
        mid = msg.msg_id
        op = self._open
        out: list[Epoch] | tuple[()] = ()
        if mid not in TIMED:  # GSA, GSV, VTG, ZDA, GST, TXT...: join the open epoch (most lines)
            if mid == "TXT":  # receiver text (antenna status, boot banners): an event, rate-limited
                self._on_txt(msg, mono, wall)
                return ()
            if op is not None and op.tod is None and mono - op.mono > UNTIMED_GAP_S:
                out = [self._close()]
                op = None
            if op is None:
                op = self._open = _Open(mono, wall, None)
        else:
            t = msg.fields.get("time")
            if t is self._tod_of:  # the decoder shares one time object per text: GGA, RMC, ... alike
                tod = self._tod
            else:
                tod = (t.hour * 3600 + t.minute * 60 + t.second + t.microsecond / 1e6
                       if isinstance(t, _dt.time) else None)  # tod_seconds, inline (hot path)
                self._tod_of, self._tod = t, tod
            key = msg.talker + mid
            if op is not None:
                if tod is not None and op.tod is None and not op.timed_keys:
                    op.tod = tod  # untimed lines came first: this epoch's time is now known
                elif tod is not None and tod == self._closed_tod and op.tod not in (None, tod):
                    self.late += 1  # belongs to the epoch already published: counted, not re-opened
                    return out
                elif tod is not None and tod == op.tod:
                    pass  # the same time of fix from another talker (GP/GL/GN) or repeated: one epoch
                elif key in op.timed_keys or tod != op.tod:
                    out = [self._close()]
                    op = None
            if op is None:
                op = self._open = _Open(mono, wall, tod)
            op.timed_keys.add(key)
        if self._gst_ahead is not None and self._gst_ahead[0] == op.tod:  # its GST came first
            op.by_type.setdefault("GST", self._gst_ahead[1])
            self._gst_ahead = None
        if len(op.sentences) < MAX_SENTENCES:  # add the sentence to the open epoch
            op.sentences.append(mid)
        handler = _HANDLERS.get(mid)
        if handler is not None:
            handler(self, op, msg, mono)
        elif mid not in op.by_type:
            op.by_type[mid] = msg.fields
        return out

    def finish(self) -> list[Epoch]:
        """End of stream: close the open epoch and report pending GSV breakage."""
        out = [self._close()] if self._open is not None else []
        for kind, text, data in self._clock.finish():  # a jump never confirmed: a time fault
            self._emit(self._mono, self._wall, kind, text, data=data)
        self._gsv_event(self._mono, self._wall, force=True)
        return out

    def drain_events(self) -> list[Event]:
        ev, self._events = self._events, []
        return ev

    def sky(self) -> tuple[SatObs, ...]:
        """Satellites in view now (used flags from the last completed epoch)."""
        self._sky.expire(self._mono)
        return self._sky.seen(self._used)

    @property
    def gsv_incomplete(self) -> int:
        return self._gsv.broken

    # -- assembly ------------------------------------------------------------------------
    def _on_fix(self, op: _Open, msg: Decoded, mono: float) -> None:
        """A position sentence: the first one of its type that has a position wins. Receivers send
        one per talker for the same time (GN with the position, GP/GL with empty fields)."""
        f = msg.fields
        bt = op.by_type
        had = bt.get(msg.msg_id)
        if had is None or (had.get("lat").__class__ is not float and f.get("lat").__class__ is float):
            bt[msg.msg_id] = f

    def _on_dated(self, op: _Open, msg: Decoded, mono: float) -> None:
        f = msg.fields
        if msg.msg_id == "RMC":
            self._on_fix(op, msg, mono)
        else:
            op.by_type.setdefault(msg.msg_id, f)
        d = f.get("date")
        if isinstance(d, _dt.date):
            op.date, op.date_tod = d, None  # RMC: the date of its own time of fix
        elif all(type(f.get(k)) is int for k in ("day", "month", "year")):
            try:
                d = _dt.date(f["year"], f["month"], f["day"])
            except (ValueError, OverflowError):
                return  # impossible date: the epoch keeps the carried-forward date
            zt = _tod_of(f.get("time"))
            if zt is not None and op.date is None:  # ZDA: the date of the ZDA's own time
                op.date, op.date_tod = d, zt

    def _on_gst(self, op: _Open, msg: Decoded, mono: float) -> None:
        """GST describes the fix whose time it carries: kept for that epoch only (a receiver may
        send it before or after the fix sentences of its burst)."""
        f = msg.fields
        t = self._tod if (t := f.get("time")) is self._tod_of else _tod_of(t)  # often its fix's time object
        if t is None or op.tod is None or t == op.tod:
            op.by_type.setdefault("GST", f)
        elif t == self._closed_tod:
            self.late += 1  # it describes the epoch already published: counted, not attached
        else:
            self._gst_ahead = (t, f)  # for the epoch of that time, if it comes next

    def _on_gsa(self, op: _Open, msg: Decoded, mono: float) -> None:
        """One GSA: its used list joins the epoch's union (livefix.state.used places each list)."""
        f = msg.fields
        bt = op.by_type
        had = bt.get("GSA")
        if had is not f:
            bt["GSA"] = solution_gsa(had, f)  # whose DOPs and fix mode describe the solution
        placed = self._gsa.add_gsa(msg.talker, f)
        if placed:
            op.used.update(placed)

    def _on_gsv(self, op: _Open, msg: Decoded, mono: float) -> None:
        group, sats, broken = self._gsv.add(msg.talker, msg.fields)
        if self._gsv.last_unknown:
            self._gsa.note_unknown(msg.talker + "GSV", self._gsv.last_unknown)
        if sats is not None:
            self._sky.replace(group, sats, mono)
        if broken:
            self._gsv_unreported += broken
            self._gsv_event(mono, self._wall)

    def _gsv_event(self, mono: float, wall: float, force: bool = False) -> None:
        if not self._gsv_unreported:
            return
        last = self._gsv_last_event
        if force or last is None or mono - last >= GSV_EVENT_EVERY_S:
            n, self._gsv_unreported = self._gsv_unreported, 0
            self._gsv_last_event = mono
            self._emit(mono, wall, "gsv_incomplete", f"{n} incomplete GSV set(s): kept the parts that arrived whole",
                       data={"count": n, "total": self._gsv.broken})

    # -- closing -------------------------------------------------------------------------
    def _close(self) -> Epoch:
        op, self._open = self._open, None
        assert op is not None
        bt = op.by_type
        gga, gns, rmc, gll = bt.get("GGA"), bt.get("GNS"), bt.get("RMC"), bt.get("GLL")  # POSITION_FROM
        gsa, gst, vtg = bt.get("GSA") or _NONE, bt.get("GST") or _NONE, bt.get("VTG") or _NONE
        lat = lon = None
        for src in (gga, gns, rmc, gll):
            if src and type(src.get("lat")) in _NUM and type(src.get("lon")) in _NUM:
                lat, lon = float(src["lat"]), float(src["lon"])
                break
        fix_src = gga or gns or rmc or gll or _NONE
        alt_src = gga or gns or _NONE
        alt, sep = _num(alt_src.get("alt")), _num(alt_src.get("sep"))
        gga, gns, rmc = gga or _NONE, gns or _NONE, rmc or _NONE
        speed = _num(rmc.get("spd"))
        if speed is not None:
            speed *= KNOT_MPS
        elif type(vtg.get("sogk")) in _NUM:
            speed = vtg["sogk"] / 3.6
        elif type(vtg.get("sogn")) in _NUM:
            speed = vtg["sogn"] * KNOT_MPS
        nav = gsa.get("navMode")
        utc = None
        if op.tod is not None:
            date = op.date
            if date is not None and op.date_tod is not None:  # a ZDA date across midnight from the fix
                if op.tod - op.date_tod > _HALF_DAY:
                    date -= _dt.timedelta(days=1)
                elif op.date_tod - op.tod > _HALF_DAY:
                    date += _dt.timedelta(days=1)
            utc, notes = self._clock.resolve(op.tod, date, op.wall, op.mono)
            for kind, text, data in notes:
                self._emit(op.mono, op.wall, kind, text, utc, data)
        self._sky.expire(self._mono)
        used = self._gsa.close(op.used, self._sky.in_view, op.mono)
        if used is not self._used and used != self._used:  # usually the same set: keep its sorted tuple
            self._used, self._used_sorted = used, tuple(sorted(used))
        gst_get, num_sv = gst.get, (gga or gns).get("numSV")
        ep = make_epoch((  # in epoch.EPOCH_FIELDS order (make_epoch: no frozen-dataclass __init__)
            op.mono, op.wall, utc, _quality(bt.get("GGA"), fix_src), lat, lon,  # mono .. lon
            alt + sep if alt is not None and sep is not None else None, alt, sep,  # h, alt_msl, sep
            num_sv if type(num_sv) is int else None, _first(gga.get("HDOP"), gns.get("HDOP"), gsa.get("HDOP")),
            _num(gsa.get("PDOP")), _num(gsa.get("VDOP")), nav if type(nav) is int else None,  # .. fix_dim
            _num(gst_get("stdLat")), _num(gst_get("stdLong")), _num(gst_get("stdAlt")), _num(gst_get("rangeRms")),
            speed, _first(rmc.get("cog"), vtg.get("cogt")), _first(gga.get("diffAge"), gns.get("diffAge")),
            self._sky.obs(self._used), self._used_sorted, tuple(op.sentences), self._gsa.unknown,  # sats ..
            self._clock.date_known, _datum(bt.get("DTM"))))  # date_known, datum
        self.last_epoch, self._closed_tod = ep, op.tod
        self.epochs += 1
        return ep

    def _on_txt(self, msg: Decoded, mono: float, wall: float) -> None:
        """TXT text is data from the wire: capped in length and to TXT_PER_S events a second
        (the rest counted in `txt_suppressed`) but for first sights (livefix.state.texts)."""
        if mono - self._txt_window >= 1.0:
            self._txt_window, self._txt_in_window = mono, 0
        self._txt_in_window += 1
        if (first := self.texts.add(msg.fields.get("text", ""))) is not None:  # data receiver_text, first
            return self._emit(mono, wall, "note", f"receiver text: {first}",
                              data={"talker": msg.talker, "receiver_text": first, "first": True})
        if self._txt_in_window > TXT_PER_S:
            self.txt_suppressed += 1
            return
        text = str(msg.fields.get("text", ""))[:TXT_MAX]
        self._emit(mono, wall, "note", f"receiver text: {text}", data={"talker": msg.talker})

    def _emit(self, mono: float, wall: float, kind: str, text: str, utc: float | None = None,
              data: dict | None = None) -> None:
        if len(self._events) >= MAX_EVENTS:
            del self._events[0]
            self.events_dropped += 1
        self._events.append(Event(mono, wall, kind, text, utc, data or {}))


_HALF_DAY = 43200.0


def _tod_of(t: Any) -> float | None:
    """datetime.time -> seconds of day; an empty field -> None."""
    if isinstance(t, _dt.time):
        return t.hour * 3600 + t.minute * 60 + t.second + t.microsecond / 1e6
    return None


def _quality(gga: dict | None, src: dict) -> int:
    """GGA quality; else the best RMC/GNS/GLL mode letter; an RMC/GLL status 'V' means no fix."""
    if gga is not None:
        q = gga.get("quality")
        return q if type(q) is int else 0
    if src.get("status") == "V":
        return 0
    mode = src.get("posMode")
    if isinstance(mode, str) and mode:
        best = max(mode, key=lambda m: MODE_RANK.get(m, -1))
        return MODE_QUALITY.get(best, 0)
    return 1 if src.get("status") == "A" else 0


_HANDLERS = {
    "GSA": StateModel._on_gsa, "GSV": StateModel._on_gsv, "RMC": StateModel._on_dated,
    "ZDA": StateModel._on_dated, "GST": StateModel._on_gst, "GGA": StateModel._on_fix,
    "GNS": StateModel._on_fix, "GLL": StateModel._on_fix,
}
# what the C twin of on_sentence/_close takes from here (livefix/state/model_native.py)
_CORE = model_native.load((MAX_SENTENCES, UNTIMED_GAP_S, _HALF_DAY, KNOT_MPS))
_CORE_HELPERS = (solution_gsa, _quality, _datum, _tod_of, make_epoch, _dt.date, _dt.timedelta(days=1), TIMED, Decoded,
                 TRACKER_TYPES)
