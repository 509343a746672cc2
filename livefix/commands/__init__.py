"""Command glue: one module per subcommand, each with `add_arguments(parser)` and `run(args) -> int`.

The only layer that wires sources, the pipeline and the outputs together; `livefix.cli` just looks
a subcommand up in its table and dispatches. Nothing below this package imports it.
"""
