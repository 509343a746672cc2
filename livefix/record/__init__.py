"""Lossless recording and replay.

Recorder (livefix.record.writer):
    rec = Recorder(path, source="tcp://...", notes="site text", compress=None|"gzip",
                   rotate_s=None|3600.0, start_wall=None, site=None|SiteInfo.to_json())
    rec.write(item)        # Chunk | LinkEvent | Marker, in stream order; flushes at least once a second
    rec.close()
    rec.error -> str | None   # first write error (disk full ...): recording stops, caller goes on
Reader (livefix.record.reader):
    r = RecordingReader(path)  # also reads plain NMEA logs (items synthesised, paced by UTC fields)
    r.header -> dict;  for item in r.items(): ...;  r.damage -> str | None after iteration
    r.site -> dict | None   # the header's site record (livefix.site), None when not recorded
is_recording(path) -> bool

Details (livefix.record.writer / reader; the byte layout is in docs/recording.md):
    Recorder(..., exclusive=True)  # opening raises OSError (an existing file is never overwritten);
                                   # exclusive=False allows devices/FIFOs
    rec.marker(note) -> Marker;  rec.path (current part), rec.paths, rec.records, rec.flush()
    r.records, r.paths (parts read so far), r.clean (file ended with its end record: closed cleanly)
Replay source (livefix.sources.file.FileSource): speed (settable), pause(), resume(), seek(offset_s),
    seek_to(position_s), position_s, generation (+1 and LinkEvent(connecting, "seek") on a backward
    seek: rebuild the pipeline), damage after ENDED.
"""
