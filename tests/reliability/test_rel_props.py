"""Property-based bad input through the whole Pipeline: random bytes, mutated valid sentences,
inconsistent GSV sets, wrong talkers, time that jumps, repeats or runs backwards.

Invariants (DEVELOPERS.md "bad input loses nothing"): nothing raises, every framed line is either
decoded or refused with a counted reason, buffers and event lists stay bounded.
"""

from __future__ import annotations

import json

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from relkit import GGA, GSV, RMC, line, sim_lines

from livefix.framing import MAX_LEN
from livefix.pipeline import Pipeline
from livefix.sources.base import Chunk, Link, LinkEvent, Marker

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
# Field texts that break naive parsers: NaN-like, infinite, huge, negative, odd spacing/unicode.
NASTY = ["", "NaN", "nan", "inf", "-inf", "1e308", "-1e308", "1e999", "-1", "-0", "99999999999999999999",
         "0x1F", " 1", "1 ", "+", "-", ".", "..", "1.2.3", "999", "-99", "\u2212" + "1", "é", "*", "$"]
TALKERS = ["GP", "GL", "GA", "GB", "GQ", "GI", "GN", "BD", "QZ", "XX", "ZZ", "G", "GPP", "P", "12", ""]


def assert_accounted(p: Pipeline) -> None:
    c = p.counters()
    # lines in = decoded + refused (per reason); refusals also seen by the state model
    assert c.lines == c.decoded + c.bad_checksum + c.malformed + c.unknown
    assert sum(p.state.rejected.values()) == c.bad_checksum + c.malformed + c.unknown
    assert sum(c.rejected_by_type.values()) == c.bad_checksum + c.malformed + c.unknown
    assert p.framer.buffered <= MAX_LEN + 1
    assert len(c.recent_rejects) <= 8
    # no bad input is livefix's own error (livefix.faults); the analysis raised nothing either
    assert c.internal_errors == 0 and p.analyzer.internal_errors == 0, c.last_internal_error


def push(chunks: list[bytes], step: float = 0.05) -> Pipeline:
    p = Pipeline(source="prop")
    p.feed(LinkEvent(0.0, 1.7e9, Link.STREAMING, "test"))
    for i, data in enumerate(chunks):
        p.feed(Chunk(1.0 + i * step, 1.7e9 + i * step, data))
        if i % 7 == 0:
            p.snapshot()  # readers may look at any time
    p.finish()
    snap = p.snapshot()
    json.dumps(snap.analysis)  # publishable
    assert_accounted(p)
    return p


def mutate(s: bytes, data: st.DataObject) -> bytes:
    """One mutation of a valid sentence's fields, re-checksummed so it reaches the decoders."""
    body = s[1:s.index(b"*")].decode("ascii")
    fields = body.split(",")
    op = data.draw(st.sampled_from(["drop", "double", "nasty", "talker", "truncate", "extra", "swap"]))
    i = data.draw(st.integers(0, len(fields) - 1))
    if op == "drop" and len(fields) > 1:
        del fields[max(1, i)]
    elif op == "double":
        fields.insert(i, fields[i])
    elif op == "nasty" and i > 0:
        fields[i] = data.draw(st.sampled_from(NASTY))
    elif op == "talker":
        fields[0] = data.draw(st.sampled_from(TALKERS)) + fields[0][2:]
    elif op == "truncate":
        fields = fields[: i + 1]
    elif op == "extra":
        fields += data.draw(st.lists(st.sampled_from(NASTY), max_size=30))
    elif op == "swap" and len(fields) > 2:
        j = data.draw(st.integers(1, len(fields) - 1))
        fields[max(1, i)], fields[j] = fields[j], fields[max(1, i)]
    text = ",".join(fields)
    return line(text)


@SETTINGS
@given(st.lists(st.binary(max_size=600), max_size=40))
def test_random_bytes_never_raise_and_are_accounted(chunks: list[bytes]) -> None:
    p = push(chunks)
    assert p.counters().bytes == sum(map(len, chunks))


@SETTINGS
@given(st.lists(st.sampled_from([b"$", b"!", b"\r", b"\n", b"*", b",", b"GPGGA", b"00", b"\xff"]),
                max_size=400))
def test_structural_noise_near_the_framing_rules(tokens: list[bytes]) -> None:
    push([b"".join(tokens)])


@SETTINGS
@given(st.data())
def test_mutated_valid_sentences(data: st.DataObject) -> None:
    base = [GGA, RMC, GSV, *sim_lines()]
    out = []
    for _ in range(data.draw(st.integers(1, 60))):
        s = data.draw(st.sampled_from(base))
        out.append((mutate(s, data) if data.draw(st.booleans()) else s) + b"\r\n")
    p = push(out)
    c = p.counters()
    assert c.lines >= len(out)  # a "$" inside a field opens a new (broken) sentence


@SETTINGS
@given(st.lists(st.tuples(st.sampled_from(["GP", "GL", "GA", "GB", "GN", "GQ", "XX"]),
                          st.integers(-3, 12), st.integers(-3, 12), st.integers(-5, 10**12),
                          st.sampled_from(["", "1", "7", "F", "Z", "99"]),
                          st.integers(0, 6)), max_size=80))
def test_inconsistent_multipart_gsv_sets(parts: list[tuple]) -> None:
    """numMsg/msgNum out of order, missing, negative or huge; numSV nonsense; odd signal ids."""
    out = []
    for talker, num, part, nsv, sig, nsat in parts:
        sats = ",".join(f"{(k * 7 + 1) % 400},{k * 13 % 95},{k * 37 % 360},{k * 5 % 60}" for k in range(nsat))
        body = f"{talker}GSV,{num},{part},{nsv}" + (f",{sats}" if sats else "") + (f",{sig}" if sig else "")
        out.append(line(body) + b"\r\n")
    p = push(out)
    assert len(p.state.sky()) <= 64 * 4 * 10  # bounded whatever the numbering


@SETTINGS
@given(st.lists(st.tuples(st.integers(-90000, 180000), st.sampled_from(["", "010170", "311299", "290224",
                                                                      "300224", "999999", "060180", "010180"])),
                min_size=1, max_size=80))
def test_time_that_jumps_repeats_or_runs_backwards(times: list[tuple[int, str]]) -> None:
    out = []
    for t, date in times:
        tt = t % 86400 if t >= 0 else t  # negative: an impossible time field text
        hms = f"{tt // 3600:02d}{tt % 3600 // 60:02d}{tt % 60:02d}.00" if tt >= 0 else str(tt)
        out.append(line(f"GPGGA,{hms},4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,") + b"\r\n")
        out.append(line(f"GPRMC,{hms},A,4807.038,N,01131.000,E,0.1,84.4,{date},,,A") + b"\r\n")
    p = push(out)
    c = p.counters()
    assert p.state.epochs + c.malformed > 0  # each line became part of an epoch or a counted refusal


def test_markers_and_links_in_between_bytes_keep_order() -> None:
    p = Pipeline(source="prop")
    for i in range(200):
        p.feed(Chunk(float(i), 1.7e9 + i, GGA[: i % len(GGA)]))
        p.feed(Marker(float(i), 1.7e9 + i, "\x1b[2J note <b>"))
        p.feed(LinkEvent(float(i), 1.7e9 + i, Link.ALL[i % len(Link.ALL)], "x" * (i * 50)))
    p.finish()
    assert_accounted(p)
    assert len(p.snapshot().analysis["events"]) <= 500
