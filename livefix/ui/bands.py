"""Signal band names from the NMEA 0183 4.10/4.11 GSV signal ID (the last GSV field, hex digit).

Technicians read bands, not numbers: "L1 C/A", "E1-B/C", "B1I". The table is keyed by RINEX
system letter and the signal ID as sent. Values are from memory of the NMEA 0183 4.11 signal ID
table; tests compare the ones pynmeagps also knows (its SIGNALID table) band by band.
"""

from __future__ import annotations

SIGNAL_BANDS: dict[str, dict[str, str]] = {
    "G": {"1": "L1 C/A", "2": "L1 P", "3": "L1 M", "4": "L2 P", "5": "L2C-M", "6": "L2C-L",
          "7": "L5-I", "8": "L5-Q"},
    "R": {"1": "G1 C/A", "2": "G1 P", "3": "G2 C/A", "4": "G2 P"},
    "E": {"1": "E5a", "2": "E5b", "3": "E5a+b", "4": "E6-A", "5": "E6-BC", "6": "E1-A", "7": "E1-B/C"},
    "C": {"1": "B1I", "2": "B1Q", "3": "B1C", "4": "B1A", "5": "B2a", "6": "B2b", "7": "B2a+b",
          "8": "B3I", "9": "B3Q", "A": "B3A", "B": "B2I", "C": "B2Q"},
    "J": {"1": "L1 C/A", "2": "L1C-D", "3": "L1C-P", "4": "L1S", "5": "L2C-M", "6": "L2C-L",
          "7": "L5-I", "8": "L5-Q", "9": "L6D", "A": "L6E"},
    "I": {"1": "L5 SPS", "2": "S SPS", "3": "L5 RS", "4": "S RS", "5": "L1 SPS"},
}
BAND_WIDTH = 6  # longest name above; the table column is this wide


def band(system: str, signal: str) -> str:
    """Band name; an ID the table lacks shows as 'sig N' (never dropped), none given as '-'."""
    if not signal:
        return "-"
    sid = signal.strip().upper().lstrip("0") or "0"
    if sid == "0":
        return "all"  # signal ID 0: the receiver reports all signals together
    return SIGNAL_BANDS.get(system, {}).get(sid, f"sig {sid}")


def help_rows(width: int = 52) -> list[tuple[str, str]]:
    """Help rows 'ID band' per system, wrapped to `width`, so a number a receiver sends can be
    looked up at 80 columns."""
    rows: list[tuple[str, str]] = []
    for s, table in SIGNAL_BANDS.items():
        line, key = "", f"band {s}"
        for k, v in table.items():
            pair = f"{k} {v}"
            if line and len(line) + 2 + len(pair) > width:
                rows.append((key, line))
                line, key = "", ""
            line = f"{line}  {pair}" if line else pair
        rows.append((key, line))
    return rows
