"""Sub-commands of the ``infer`` command line, one module each.

Each module defines ``add_arguments(parser)`` and ``run(args) -> int``.
"""
