"""Analysis: running statistics over epochs, published as one JSON-able snapshot dict.

Pure function of the time-stamped stream: every time used comes from the items (Chunk/Epoch/
Event mono, wall, utc), never from the host clock, so replay at any speed gives identical results.
Streaming and bounded: fixed windows, streaming estimators, decimated history.

Interface (livefix.analysis.engine.Analyzer):
    a = Analyzer(AnalysisConfig(...))
    a.on_chunk(mono, wall, nbytes)   # every Chunk (for rate, gaps, stalls)
    a.on_epoch(epoch)                # every completed Epoch from the state model
    a.on_event(event)                # state-model events (link, time_jump, marker, ...)
    a.snapshot(counters) -> dict     # counters: livefix.pipeline.StreamCounters
    a.events -> list[Event]          # bounded, newest last, all kinds (state + analysis)

Snapshot keys (all documented in README "Report JSON"); times ISO 8601 UTC, distances metres:
  stream:   lines, bad_checksum, malformed, unknown, proprietary, junk_bytes, overlong, binary_frames,
            binary_bytes, by_type,
            epochs, rate_hz, epoch_jitter_ms, gaps, stalls [{start, duration_s}], data_gaps {count,
            total_s}, time_jumps, time_faults, receiver_dates_invalid, date_known,
            rollbacks, sentences_per_s {msg_id: rate}
  fix:      ttff_s, ttff_dgnss_s, ttff_rtk_fixed_s (null when not observed), ttff_observed, ttff_note,
            restarts {commanded, receiver}, availability {fix name: share of known time},
            availability_basis {observed_s, known_s, data_gap_s, unknown_s, restart_s},
            fix_share_after_first_fix, rtk_fixed_share_after_first, epochs_by_fix, outages
            [{start, duration_s}], outage_now, longest_outage_s, fix_losses, jumps [{time, distance_m}],
            reacquisition_s [..], current
  position: (static receiver only: moving epochs and jumps left out) mean {lat, lon, h, h_datum},
            ref {lat, lon, h, source: "user"|"session_median"|"session_mean"}, offset_m {e,n,u},
            cep50_m, cep95_m, r95_m, drms2_m, v95_m, ellipse {major_m, minor_m, orient_deg},
            window {cep50_m, cep95_m, ...}, by_fix {fix name: {n, share, cep50_m, cep95_m, ...}},
            drift_mm_per_h {e, n, u}, drift_se_mm_per_h, drift_ci95_mm_per_h {e: [lo, hi], ...},
            drift_h_mm_per_h, drift_h_ci95_mm_per_h, drift_span_s, drift_window_mm_per_h {e,n,u},
            convergence_s, convergence_v_s, convergence {radius_h_m, radius_v_m, hold_s, centre},
            jumps {count, excluded_epochs, items [...], rule}, height_datum, segments, estimators,
            allan {tau_s: [...], e: [...], n: [...], u: [...]},
            honesty {lat_ratio, lon_ratio, h_ratio, ure_m}, samples {e: [...], n: [...], u: [...]}
  motion:   state "static"|"moving"|"mixed", moving_share, moves, rule {speed_mps, spread_m, ...}
  dop:      reported {gdop, pdop, hdop, vdop}, computed {gdop, pdop, hdop, vdop, tdop},
            p95 {reported: {...}, computed: {...}}, current {reported: {...}, computed: {...}},
            disagreements
  session:  start_utc, end_utc, duration_s, date_known, start_host, end_host, host_minus_utc_s
            {start, end}, datum {local, reference, epochs, seen} (DTM; null when never sent),
            median {by_fix {fix name: {n, lat, lon, h, alt_msl, sep, resolution_m}}}
  satellites: epochs, by_system {G|R|E|C|...|all: {in_view|tracked|used: {median, min, max}}}
  signal:   cn0_mean_dbhz, top4_mean_dbhz, by_system {G: mean,...}, by_elevation [{from, to, mean}],
            curve {a, b} (expected C/N0 vs elevation), weak [{sat, elev, azim, cn0, expected}],
            interference [{start, duration_s, drop_db}], weak_sectors [{az_from, az_to, el_from, el_to,
            below_curve_db, n}], weak_sector_db
  sky:      obstructed [{az_from, az_to, below_el}], grid {az_step, el_step, tracked[[..]],
            untracked[[..]], cn0[[..]]}, clear_above_deg, visible_share
  trend:    t [...], h_err_m [...], cn0_mean [...], sats_used [...]   (decimated, <= 600 points)
            lat/lon/h [...] (fixed epochs), sky_tracks {sample_s, sats [{sat, system, az, el, cn0}]}
  events:   [{time, kind, text, ...}]
"""

from livefix.analysis.config import AnalysisConfig

__all__ = ["AnalysisConfig"]
