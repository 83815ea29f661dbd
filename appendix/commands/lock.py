"""`appendix lock STUDY [--relock --reason TEXT]`: register the plan in ``study.lock.json``."""

from __future__ import annotations

from appendix.commands.context import OK, CommandIO
from appendix.errors import UserError


def run(args, io: CommandIO) -> int:
    from appendix import api

    if args.reason is not None and not args.relock:
        raise UserError("--reason goes with --relock: a first lock needs no reason")
    outcome = api.lock(io.path(args.study), relock=args.relock, reason=args.reason,
                       clock=io.clock)
    io.say(outcome.message)
    return OK
