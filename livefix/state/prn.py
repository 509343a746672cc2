"""Satellite numbers as NMEA writes them -> (RINEX letter, number users know).

Why a table and not the talker alone: before NMEA 4.10 a sentence carries no system ID, and many
receivers list every constellation under one talker (GN, or even GP). The constellation is then
only in the number: NMEA 0183 gives 1-32 GPS, 33-64 SBAS (PRN - 87), 65-96 GLONASS (slot + 64), and
receivers extend that with three-digit blocks. A number that fits no block is never guessed: the
caller counts it as an unknown ID and reports it.
"""

from __future__ import annotations

# Combined numbering (GN/GP listing without system ID): (first, last, system, offset to user number).
# 1-32, 33-64, 65-96: NMEA 0183 (docs/sources.md#satellite-numbers, from memory). 120-158: SBAS PRNs written as
# they are (common practice). 193-200: QZSS PRNs (IS-QZSS assigns 193-202; 201-202 are read as
# BeiDou below, where the BeiDou "+200" block puts its first two GEO satellites; from memory).
# 201-263 and 401-463: BeiDou C01-C63 with +200 or +400; 301-336: Galileo E01-E36 (+300); receivers
# use either BeiDou block (docs/sources.md#satellite-numbers, from memory).
COMBINED_RANGES: tuple[tuple[int, int, str, int], ...] = (
    (1, 32, "G", 0), (33, 64, "S", 87), (65, 96, "R", -64), (120, 158, "S", 0),
    (193, 200, "J", -192), (201, 263, "C", -200), (301, 336, "E", -300), (401, 463, "C", -400),
)
# Constellation given by talker or system ID: the native numbers (NMEA 4.11 numbering: GLONASS
# slots 1-32 allowing spares, Galileo 1-36, BeiDou 1-63, QZSS 1-10, NavIC 1-14; from memory) and
# the combined block some receivers keep using under that talker.
NATIVE: dict[str, tuple[int, int]] = {"R": (1, 32), "E": (1, 36), "C": (1, 63), "J": (1, 10), "I": (1, 14)}
OFFSET_BLOCKS: dict[str, tuple[tuple[int, int, int], ...]] = {
    "R": ((65, 96, -64),), "E": ((301, 336, -300),), "C": ((201, 263, -200), (401, 463, -400)),
    "J": ((193, 202, -192),),
}
# Numbers up to this may be another constellation's native numbers written under a GP/GN talker.
NATIVE_MAX = 64


def user_prn(system: str | None, n: int) -> tuple[str, int] | None:
    """Map a listed number to (RINEX letter, user number); None when it fits no known block.

    system None (GN) and "G" (GP, or system ID 1) read the combined numbering: a GPS sentence may
    list SBAS, and older receivers list everything under GP."""
    if system is None or system == "G":
        for lo, hi, letter, off in COMBINED_RANGES:
            if lo <= n <= hi:
                return letter, n + off
        return None
    native = NATIVE.get(system)
    if native is None:  # a system without a numbering table here (SBAS): as written
        return system, n
    if native[0] <= n <= native[1]:
        return system, n
    for lo, hi, off in OFFSET_BLOCKS.get(system, ()):
        if lo <= n <= hi:
            return system, n + off
    return None

