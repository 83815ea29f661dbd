"""`appendix pack RUN [--out FILE]`: write the reviewer package of a run folder."""

from __future__ import annotations

from appendix.commands.context import OK, CommandIO


def run(args, io: CommandIO) -> int:
    from appendix import bundle

    target = bundle.pack(io.path(args.run), io.path(args.out) if args.out else None)
    io.say(f"wrote {target}")
    return OK
