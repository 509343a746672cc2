"""Issue 15: the obstruction conclusion (blocked and weak sectors) above the fold at 80x24, band
names in the table, and a C/N0 sort that does not swap rows on noise (ties by system and PRN)."""

from __future__ import annotations

from uikit import screen_text, snapshots, sync

from livefix.state.epoch import SatObs
from livefix.ui.app import MonitorApp
from livefix.ui.bands import SIGNAL_BANDS, band, help_rows
from livefix.ui.feed import SnapshotFeed
from livefix.ui.sattable import CN0_HYSTERESIS_DB, SatTable


def final_feed() -> SnapshotFeed:
    f = SnapshotFeed(snapshots(), "building-5min.lfr")
    f.step(1000)
    return f


@sync
async def test_obstruction_conclusion_is_above_the_fold_at_80x24() -> None:
    app = MonitorApp(final_feed(), clock=lambda: 0.0)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("2")
        await pilot.pause()
        top = "\n".join(screen_text(app).splitlines()[:12])
    # building scenario (livefix/sim/scenarios/building.toml): wall az 250-330 below 60°,
    # reflections az 190-250 below 40° at 7 dB
    assert "blocked:" in top and "330°" in top and "below 60°" in top
    assert "weak (≥ 5 dB under the C/N0 curve)" in top and "dB under the curve" in top


# (NMEA system ID, signal ID) -> (our band name, the band token the reference name must contain);
# the GLONASS reference calls G1/G2 "L1 OF"/"L2 OF" (open FDMA signal = C/A)
EXPECT = {
    ("1", "1"): ("L1 C/A", "L1C/A"), ("1", "5"): ("L2C-M", "L2 CM"), ("1", "6"): ("L2C-L", "L2 CL"),
    ("1", "7"): ("L5-I", "L5 I"), ("1", "8"): ("L5-Q", "L5 Q"), ("2", "1"): ("G1 C/A", "L1 OF"),
    ("2", "3"): ("G2 C/A", "L2 OF"), ("3", "1"): ("E5a", "E5 a"), ("3", "2"): ("E5b", "E5 b"),
    ("3", "7"): ("E1-B/C", "E1 B"), ("4", "1"): ("B1I", "B1I"), ("4", "3"): ("B1C", "B1 C"),
    ("4", "5"): ("B2a", "B2 a"), ("4", "B"): ("B2I", "B2I"), ("5", "1"): ("L1 C/A", "L1C/A"),
    ("5", "4"): ("L1S", "L1S"), ("5", "5"): ("L2C-M", "L2 CM"), ("5", "6"): ("L2C-L", "L2 CL"),
    ("5", "7"): ("L5-I", "L5 I"), ("5", "8"): ("L5-Q", "L5 Q"), ("6", "1"): ("L5 SPS", "L5"),
}
SYSTEM_OF = {"1": "G", "2": "R", "3": "E", "4": "C", "5": "J", "6": "I"}  # NMEA 4.11 system IDs


def test_band_names_follow_the_nmea_signal_id_table() -> None:
    from pynmeagps.nmeatypes_decodes import SIGNALID  # reference library's NMEA 4.11 signal table

    assert set(SIGNALID) == set(EXPECT)  # every entry the reference knows is checked
    for (sid, sig), name in SIGNALID.items():
        ours, token = EXPECT[(sid, sig)]
        assert token in name, (sid, sig, name)
        assert band(SYSTEM_OF[sid], sig) == ours
    assert band("G", "F") == "sig F" and band("G", "") == "-"  # unknown kept visible, never dropped
    flat = " ".join(v for _, v in help_rows())
    assert all(f"{k} {v}" in flat for t in SIGNAL_BANDS.values() for k, v in t.items())  # number in the help


def _sat(prn: int, cn0: float, system: str = "G") -> SatObs:
    return SatObs(system, prn, "1", 45, 100, cn0, True)


@sync
async def test_cn0_sort_holds_order_on_noise_and_breaks_ties_by_system_and_prn() -> None:
    app = MonitorApp(final_feed(), clock=lambda: 0.0)
    async with app.run_test(size=(160, 50)) as pilot:
        await pilot.pause()
        table = app.query_one(SatTable)
        table.sort = "cn0"
        first = (_sat(5, 40.0), _sat(7, 41.0), _sat(3, 30.0, "E"), _sat(2, 30.0, "G"))
        table.show(first, 0.0)
        order = [(o.system, o.prn) for _, o in table.rows]
        # equal C/N0 (30): GPS before Galileo (RINEX order G R E C J I S), then PRN
        assert order == [("G", 7), ("G", 5), ("G", 2), ("E", 3)]
        noisy = (_sat(5, 41.0 + 1.0), _sat(7, 41.0 - 1.0), *first[2:])  # 2 dB swap < hysteresis
        assert 2.0 < CN0_HYSTERESIS_DB
        table.show(noisy, 1.0)
        assert [(o.system, o.prn) for _, o in table.rows] == order
        real = (_sat(5, 48.0), _sat(7, 40.0), *first[2:])  # a real change moves the row
        table.show(real, 2.0)
        assert [(o.system, o.prn) for _, o in table.rows][:2] == [("G", 5), ("G", 7)]
