"""Invented analysis snapshot for renderer tests (demo data, no real site)."""
import random


def sample_analysis(seed=1):
    rnd = random.Random(seed)
    e = [rnd.gauss(0, 0.01) for _ in range(300)]
    n = [rnd.gauss(0, 0.01) for _ in range(300)]
    return {
      "stream": {"lines": 1000, "bad_checksum": 0, "malformed": 0, "unknown": 0, "epochs": 300, "stalls": [], "stall_count": 0, "junk_bytes": 0, "rate_hz": 1.0},
      "fix": {"ttff_s": 30.0, "ttff_rtk_fixed_s": 70.0, "availability": {"none": 0.0, "rtk_fixed": 0.97, "rtk_float": 0.03},
              "outages": [], "outages_total": 0, "longest_outage_s": 0.0, "jumps": [], "jumps_total": 0, "current": "rtk_fixed", "epochs": 300, "interval_s": 1.0, "starts": [{"from": "stream", "ttff_s": 30.0, "ttff_rtk_fixed_s": 70.0}]},
      "position": {"cep50_m": 0.012, "cep95_m": 0.024, "samples": {"e": e, "n": n, "u": e},
                   "by_fix": {"rtk_fixed": {"n": 290, "cep50_m": 0.01, "cep95_m": 0.02}},
                   "ref": {"source": "session_mean"}, "drift_mm_per_h": {"e": 1.0, "n": 2.0, "u": 0.5},
                   "allan": {"tau_s": [1, 2, 4, 8], "e": [0.01, 0.007, 0.005, 0.0035], "n": [0.01, 0.007, 0.005, 0.004], "u": [0.02, 0.015, 0.01, 0.008]}},
      "signal": {"cn0_mean_dbhz": 43.0, "by_elevation": [{"from": f, "to": f + 10, "mean": 33 + f / 6} for f in range(0, 90, 10)],
                 "weak": [{"sat": "G05", "elev": 12, "azim": 100, "cn0": 28, "expected": 35}]},
      "sky": {"clear_above_deg": 5, "obstructed": [{"az_from": 90, "az_to": 180, "below_el": 40}],
              "grid": {"az_step": 30, "el_step": 10, "tracked": [[3] * 9 for _ in range(12)], "untracked": [[1] * 9 for _ in range(12)]}},
      "trend": {"t": ["2026-01-01T00:00:00Z", "2026-01-01T00:01:00Z", "2026-01-01T00:02:00Z"], "h_err_m": [0.01, 0.02, 0.01], "sats_used": [20, 21, 19]},
      "events": [{"time": "2026-01-01T00:00:00Z", "kind": "note", "text": "<script>alert(1)</script>\x1b[31m"}],
      "dop": {"computed": {"hdop": 0.8}},
    }
