"""Regenerate the demo recordings in recordings/ from the simulator (`python -m livefix.commands.make_recordings`).

Deterministic: the same code gives the same recorded items (simulated clocks, fixed seeds, fixed
start UTC); only the recorder's closing record (host time) and the gzip flush points vary.
Recordings are gzip-compressed livefix recordings (the reader detects gzip by its magic bytes).
"""

from __future__ import annotations

import argparse
from pathlib import Path

from livefix.commands.simulate import write_file
from livefix.sim.receiver import SimReceiver
from livefix.sim.scenario import Scenario

# file name -> (scenario, seconds, rate Hz, seed)
RECORDINGS: dict[str, tuple[str, float, int, int]] = {
    "rooftop-5min.lfr": ("rooftop", 300.0, 10, 1),
    "building-5min.lfr": ("building", 300.0, 10, 1),
    "soak-10min.lfr": ("soak", 600.0, 10, 1),
}
DEFAULT_DIR = Path(__file__).resolve().parents[2] / "recordings"

README = """# Demo recordings

Made by the built-in simulated receiver (`python -m livefix.commands.make_recordings`); every site,
satellite and number in them is invented. Each file is a gzip-compressed livefix recording,
10 Hz, seed 1, stamped with simulated clocks, so regenerating gives the same recorded items (only
the closing record's host time and the gzip flush points differ).
Try: `livefix watch recordings/building-5min.lfr` or `livefix report recordings/soak-10min.lfr`.

| file | scenario | what to look for |
|---|---|---|
{rows}

Sentences: GGA, RMC, VTG and one GSA per constellation (systemId 1-4) every epoch; GSV per
constellation (GP/GL/GA/GB, with signal ID) and ZDA once a second; GST every epoch with a fix.
Fix timeline: no fix until the TTFF, then single, dgnss, rtk_float and rtk_fixed (GGA quality 1,
2, 5, 4).
"""

NOTES = {
    "rooftop": "open sky; first fix at {ttff:g} s, RTK fixed {fixed:g} s after that; about 35-40 satellites in view",
    "building": "wall blocks azimuth 250-330 deg below 60 deg (in view, not tracked: empty C/N0); "
                "weak, noisy C/N0 to the south-west (multipath); RTK fixed only after {fixed:g} s",
    "soak": "scripted faults: {faults}",
}


def _row(name: str, sc: Scenario, size: int) -> str:
    faults = "; ".join(f"{f.kind}{' ' + f.restart if f.kind == 'restart' else ''} at {f.at:g} s"
                       + (f" for {f.duration:g} s" if f.duration else "") for f in sc.faults)
    note = NOTES.get(sc.name, sc.description).format(ttff=sc.ttff_s, fixed=sc.fixed_after_s, faults=faults)
    return f"| `{name}` ({size // 1024} KiB) | {sc.name}: {sc.description} | {note} |"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--dir", type=Path, default=DEFAULT_DIR, help="output folder (default: recordings/)")
    args = ap.parse_args(argv)
    rows = []
    for name, (scen, secs, rate, seed) in RECORDINGS.items():
        path = args.dir / name
        path.unlink(missing_ok=True)
        sc = Scenario.load(scen)
        write_file(SimReceiver(sc, rate_hz=rate, seed=seed), path, secs, compress="gzip")
        size = path.stat().st_size
        rows.append(_row(name, sc, size))
        print(f"{path}: {size} bytes")
    (args.dir / "README.md").write_text(README.format(rows="\n".join(rows)), encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
