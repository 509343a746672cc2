"""livefix: live NMEA 0183 monitor, recorder and pass/fail checker for GNSS installations."""

__version__ = "0.1.0"
