"""The full-screen Textual monitor: a reader of immutable pipeline Snapshots.

Drawing and formatting live in pure modules (skydraw, fmt) so they can be tested without a
terminal; each widget has its own module; `command` is the `livefix watch` entry point.
"""
