"""Lossless recording and replay.

Recorder (livefix.record.writer):
    rec = Recorder(path, source="tcp://...", notes="site text", compress=None|"gzip",
                   rotate_s=None|3600.0, start_wall=None)
    rec.write(item)        # Chunk | LinkEvent | Marker, in stream order; flushes at least once a second
    rec.close()
    rec.error -> str | None   # first write error (disk full ...): recording stops, caller goes on
Reader (livefix.record.reader):
    r = RecordingReader(path)  # also reads plain NMEA logs (items synthesised, paced by UTC fields)
    r.header -> dict;  for item in r.items(): ...;  r.damage -> str | None after iteration
is_recording(path) -> bool
"""
