"""`appendix check STUDY`: validate plan and data, list what a run would compute; writes
nothing."""

from __future__ import annotations

from appendix.commands.context import OK, CommandIO


def run(args, io: CommandIO) -> int:
    from appendix import api

    io.say(*api.check(io.path(args.study)))
    return OK
