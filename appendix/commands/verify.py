"""`appendix verify PACKAGE`: check every hash, recompute, compare; exit 1 on any mismatch."""

from __future__ import annotations

from appendix.commands.context import FINDINGS, OK, CommandIO


def run(args, io: CommandIO) -> int:
    from appendix import api, bundle

    result = api.verify(io.path(args.package))
    io.say(*bundle.report(result))
    return OK if result.reproduced else FINDINGS
