"""`appendix selftest`: the published reference checks on this installation; exit 1
unless every check ran and passed."""

from __future__ import annotations

from appendix.commands.context import FINDINGS, OK, CommandIO


def run(args, io: CommandIO) -> int:  # noqa: ARG001 - the command takes no arguments
    from appendix import selftest

    results = selftest.nist_checks()
    io.say(*selftest.report(results))
    return OK if results and all(r.passed for r in results) else FINDINGS
