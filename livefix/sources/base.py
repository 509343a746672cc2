"""What every source delivers: raw byte chunks stamped with host time, plus link-state changes.

A source never parses. It hands over every byte it received, in order, so the recorder can keep
them all and the framing stage can decide what they are. Times come from the host clocks at
arrival (or, in replay, from the recording), never from the data, so that analysis is a pure
function of this stream of items. What a source must offer (and its optional capabilities: pacing,
seeking, probing a live link) is written down in livefix.contracts.
"""

from __future__ import annotations

from livefix.contracts import Paced, Probed, Seekable, Source
from livefix.items import Chunk, Item, Link, LinkEvent, Marker

__all__ = ["Chunk", "Item", "Link", "LinkEvent", "Marker", "Paced", "Probed", "Seekable", "Source", "SourceError"]


class SourceError(Exception):
    """A source that cannot run at all (bad spec, no such file); the message is one clear line."""
