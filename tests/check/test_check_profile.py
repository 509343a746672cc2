"""Profile grammar, loading errors and evaluation over an analysis snapshot."""

import numpy as np
import pytest
from pynmeagps import calc_checksum

from livefix.check.profile import (
    ProfileError,
    builtin_names,
    evaluate,
    load_profile,
    parse_profile,
    restart_sentence,
)
from livefix.check.ttff import percentile

ANALYSIS = {  # invented figures for the grammar tests
    "sky": {"clear_above_deg": 10.0, "obstructed": []},
    "signal": {"by_elevation": [{"from": 0, "to": 10, "mean": 30.0}, {"from": 30, "to": 40, "mean": 41.5},
                                {"from": 40, "to": 50, "mean": 38.0}, {"from": 50, "to": 60, "mean": None}]},
    "fix": {"availability": {"none": 0.1, "single": 0.2, "rtk_fixed": 0.7}, "jumps": [{"distance_m": 6}],
            "epochs": 100, "interval_s": 1.0, "ttff_s": 10.0, "starts": [{"from": "stream", "ttff_s": 10.0}]},
    "position": {"cep95_m": 2.0, "by_fix": {"rtk_fixed": {"cep95_m": 0.02}}},
    "stream": {"lines": 1000, "bad_checksum": 2},
}


def one(text: str) -> list:
    return evaluate(parse_profile("[profile]\nname='t'\n" + text), ANALYSIS)


def test_builtin_profiles_load_and_name_sources():
    assert {"commission", "soak"} <= set(builtin_names())
    for name in ("commission", "soak"):
        prof = load_profile(name)
        assert prof.thresholds and all(t.source for t in prof.thresholds)
    sky = next(t for t in load_profile("commission").thresholds if t.metric == "sky.clear_above_deg")
    assert sky.limit == 10 and "IGS" in sky.source  # IGS CORS site guidelines v1.0.0: nothing above 10 deg


def test_selector_and_reduce():
    r = one("[[threshold]]\nname='c'\nmetric='signal.by_elevation[from>=30].mean'\nreduce='min'\nop='>='\nlimit=35\n")
    assert r[0].measured == 38.0 and r[0].passed


def test_fix_qualifier_and_derived_share():
    r = one("[[threshold]]\nname='a'\nmetric='position.cep95_m'\nfix='rtk_fixed'\nop='<='\nlimit=0.03\n"
            "[[threshold]]\nname='b'\nmetric='fix.availability'\nfix='rtk_fixed'\nop='>='\nlimit=0.7\n"
            "[[threshold]]\nname='s'\nmetric='derived.fix_share'\nop='>='\nlimit=0.89\n"
            "[[threshold]]\nname='after'\nmetric='derived.fix_share_after_first_fix'\nop='>='\nlimit=0.99\n")
    assert [x.measured for x in r[:3]] == [0.02, 0.7, pytest.approx(0.9)]
    assert all(x.passed for x in r)  # 10 pre-fix epochs of 100 excluded -> 90/90


def test_list_counts_and_missing_metric_fails():
    # a bare list is no catalogue name (issue 14 item 2); a selector path over it counts its entries
    r = one("[[threshold]]\nname='j'\nmetric='fix.jumps[distance_m>=0]'\nop='=='\nlimit=0\n"
            "[[threshold]]\nname='m'\nmetric='dop.computed.hdop'\nop='<='\nlimit=2\n")
    assert r[0].measured == 1 and not r[0].passed
    assert r[1].measured is None and not r[1].passed and r[1].note == "not measured"


@pytest.mark.parametrize("text, key", [
    ("[[threshold]]\nname='x'\nmetric='a.b'\nop='=<'\nlimit=1\n", "'op'"),
    ("[[threshold]]\nname='x'\nmetric='a.b'\nop='<='\nlimit='ten'\n", "'limit'"),
    ("[[threshold]]\nname='x'\nmetric='a..b'\nop='<='\nlimit=1\n", "'metric'"),
    ("[[threshold]]\nname='x'\nmetric='a.b'\nop='<='\n", "'limit'"),
    ("[[threshold]]\nname='x'\nmetric='a.b'\nop='<='\nlimit=1\nlimt=2\n", "'limt'"),
    ("[[threshold]]\nname='x'\nmetric='sky.a'\nfix='rtk_fixed'\nop='<='\nlimit=1\n", "'fix'"),
    ("[ttff_cycles]\nn=0\n", "'n'"),
    ("[ttff_cycles]\nkind='lukewarm'\n", "'kind'"),
    ("[ttff_cycles]\nsend_hex='zz'\n", "'send_hex'"),
    ("[bogus]\n", "'bogus'"),
    ("x = [\n", "not valid TOML"),
])
def test_bad_profile_names_the_key(text, key):
    with pytest.raises(ProfileError) as exc:
        parse_profile(text, origin="mine.toml")
    assert key in str(exc.value) and "mine.toml" in str(exc.value)


def test_unknown_profile_lists_builtins(tmp_path):
    with pytest.raises(ProfileError, match="commission"):
        load_profile("nosuch")
    with pytest.raises(ProfileError, match="cannot read"):
        load_profile(str(tmp_path / "missing.toml"))


def test_shell_command_only_from_own_file():
    text = "[ttff_cycles]\nn=2\ncommand='true'\n"
    assert parse_profile(text, builtin=False).ttff.command == "true"
    with pytest.raises(ProfileError, match="own profile"):
        parse_profile(text, builtin=True)


def test_restart_sentence_checksum_matches_pynmeagps():
    # reference: pynmeagps.calc_checksum (NMEA 0183 XOR between $ and *)
    sent = restart_sentence("$PLFX,RESET,COLD")
    assert sent == f"$PLFX,RESET,COLD*{calc_checksum('PLFX,RESET,COLD')}\r\n".encode()
    # public example sentence (a public NMEA example page, docs/sources.md#example-sentences): checksum 47
    gga = "$GPGGA,123519,4807.038,N,01131.000,E,1,08,0.9,545.4,M,46.9,M,,"
    assert restart_sentence(gga) == (gga + "*47\r\n").encode()
    assert restart_sentence("$PLFX,RESET,HOT*00") == b"$PLFX,RESET,HOT*00\r\n"  # given checksum kept


def test_percentile_matches_numpy():
    # reference: numpy.percentile default (linear) method
    xs = [31.0, 3.5, 28.2, 40.0, 35.5, 29.9, 33.3]
    for q in (0, 50, 95, 100):
        assert percentile(xs, q) == pytest.approx(float(np.percentile(xs, q)))


def test_unknown_metric_and_unit_are_refused_with_the_valid_names() -> None:
    # issue 15 item 5: a profile naming an unknown metric or unit fails at load, naming it and
    # listing valid names; issue 14 item 2: the names are the metric catalogue's (docs/metrics.md)
    head = '[[threshold]]\nname = "x"\nop = "<="\nlimit = 1\n'
    refused = [
        ('metric = "position.cep96_m"\n', r"unknown metric 'position\.cep96_m'.*cep95_m"),
        ('metric = "position.cep95_m"\nunit = "furlongs"\n', r"unknown unit 'furlongs'.*mm/h"),
        # a real snapshot key outside the catalogue; the message lists catalogue names
        ('metric = "fix.interval_s"\n', r"unknown metric 'fix\.interval_s'.*position\.cep95_m.*sky\.clear"),
        # a selector path must start at a published figure
        ('metric = "signal.by_height[from>=30].mean"\n', r"unknown metric 'signal\.by_height\[from>=30\]"),
        # the stated unit must be the catalogue's: CEP95 is in metres, not millimetres
        ('metric = "position.cep95_m"\nunit = "mm"\n', r"unit 'mm' does not match 'position\.cep95_m'.*'m'"),
    ]
    for body, message in refused:
        with pytest.raises(ProfileError, match=message):
            parse_profile(head + body)
    parse_profile(head + 'metric = "position.cep95_m"\nunit = "m"\n')  # a known pair is accepted
    # no unit stated: the catalogue's unit is used (TTFF in seconds)
    assert parse_profile(head + 'metric = "fix.ttff_s"\n').thresholds[0].unit == "s"
    # fix.availability names no figure until the fix qualifier picks one (fix.availability.rtk_fixed)
    assert parse_profile(head + 'metric = "fix.availability"\nfix = "rtk_fixed"\n').thresholds[0].unit == "ratio"


def test_results_carry_the_catalogue_label() -> None:
    r = one("[[threshold]]\nname='a'\nmetric='position.cep95_m'\nop='<='\nlimit=3\n"
            "[[threshold]]\nname='c'\nmetric='signal.by_elevation[from>=30].mean'\nreduce='min'\nop='>='\nlimit=35\n")
    assert r[0].label == "CEP95" and r[0].to_json()["label"] == "CEP95" and r[0].unit == "m"
    assert r[1].label == "signal.by_elevation[from>=30].mean"  # a selector path is its own label
    # a fix-qualified share takes the label of the figure it picks
    r = one("[[threshold]]\nname='b'\nmetric='fix.availability'\nfix='rtk_fixed'\nop='>='\nlimit=0.7\n")
    assert r[0].label == "RTK fixed share (whole run)" and r[0].measured == 0.7  # ANALYSIS above: 0.7
