"""State: the one writer that turns decoded sentences into epochs, satellites and events."""

from livefix.state.model import StateModel

__all__ = ["StateModel"]
