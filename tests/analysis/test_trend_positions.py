"""Trend positions (mean lat/lon/height of the fixed epochs per point) and the bounded satellite paths
that the report's plots read."""

from __future__ import annotations

import numpy as np
import pytest

from livefix.analysis.skytrack import MAX_POINTS, SAMPLE_S, SkyTracks
from livefix.analysis.trend import Trend
from livefix.state.epoch import SatObs


def test_positions_are_exact_bucket_means_through_merges() -> None:
    tr = Trend(max_points=8, width_s=1.0)
    rng = np.random.default_rng(7)
    lat = 47.0 + rng.normal(0, 1e-7, 64)  # ~1 cm of noise in latitude (invented site)
    lon = 8.0 + rng.normal(0, 1e-7, 64)
    h = 450.0 + rng.normal(0, 0.02, 64)
    for i in range(64):
        tr.add_values(float(i), None, None, None, None, float(lat[i]), float(lon[i]), float(h[i]))
    snap = tr.snapshot()
    # 64 one-second epochs into 8 points: three pairwise merges give 8-second buckets of 8 epochs
    assert snap["bucket_s"] == 8.0 and len(snap["lat"]) == 8
    assert snap["lat"] == pytest.approx(lat.reshape(8, 8).mean(axis=1).tolist(), abs=1e-9)  # numpy reference
    assert snap["lon"] == pytest.approx(lon.reshape(8, 8).mean(axis=1).tolist(), abs=1e-9)
    assert snap["h"] == pytest.approx(h.reshape(8, 8).mean(axis=1).tolist(), abs=1e-4)


def test_epochs_without_fix_or_height_leave_gaps_not_zeros() -> None:
    tr = Trend()
    tr.add_values(0.0, None, None, None, None, None, None, None)  # no fix
    tr.add_values(1.0, None, None, None, None, 47.0, 8.0, None)  # fix without a height
    tr.add_values(2.0, None, None, None, None, 47.0, 8.0, 450.0)
    snap = tr.snapshot()
    assert snap["lat"] == [None, 47.0, 47.0] and snap["h"] == [None, None, 450.0]


def _sat(system: str, prn: int, el: int, az: int, cn0: float | None) -> SatObs:
    return SatObs(system, prn, "1", el, az, cn0, cn0 is not None)


def test_sky_tracks_sample_whole_degrees_and_mark_untracked() -> None:
    st = SkyTracks()
    sats = (_sat("G", 5, 45, 90, 44.6), _sat("R", 3, 10, 300, None))
    st.add(0.0, sats)
    st.add(1.0, (_sat("G", 5, 46, 91, 45.0),))  # within SAMPLE_S of the last sample: skipped
    st.add(SAMPLE_S, (_sat("G", 5, 46, 91, 45.0),))
    snap = st.snapshot()
    by = {s["sat"]: s for s in snap["sats"]}
    assert by["G05"] == {"sat": "G05", "system": "G", "az": [90, 91], "el": [45, 46], "cn0": [45, 45]}
    assert by["R03"]["cn0"] == [None]  # listed in view, no C/N0: untracked


def test_sky_tracks_stay_bounded_over_a_week() -> None:
    st = SkyTracks()
    # 30 satellites moving 0.25° a minute for 7 days, sampled as a 1 Hz stream would offer them
    for k in range(0, 7 * 86400, 5):
        t = float(k)
        sats = tuple(_sat("G", p, int(45 + 40 * np.sin(t / 21600 + p)), int(t / 240 + 12 * p) % 360, 40.0)
                     for p in range(1, 31))
        st.add(t, sats)
    assert st.points <= MAX_POINTS
    assert sum(len(s["az"]) for s in st.snapshot()["sats"]) == st.points
    assert st.interval > SAMPLE_S  # thinned: the interval doubled at least once
