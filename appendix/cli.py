"""Command line: parse the arguments, hand them to the command's module
(`appendix.commands.<name>.run`), and map what escapes it to an exit code.

Exit codes: 0 done; 1 done, but something the user must see; 2 bad input or usage (a
message, no traceback); 3 an internal error (a bug), with a log file naming versions; 130
and 143 stopped by Ctrl-C (SIGINT) or SIGTERM, with nothing replaced and no staging left.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import errno
import os
import sys
import traceback
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TextIO

from appendix import __version__
from appendix.commands.context import BUG, INTERRUPTED, OK, TERMINATED, USAGE, CommandIO
from appendix.epoch import source_date
from appendix.errors import UserError


#: Errors of the machine, not of appendix: disk full, quota, read-only, permission.
_MACHINE_ERRNOS = frozenset({errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EACCES, errno.EPERM,
                             errno.EFBIG, errno.EIO})


class Terminated(BaseException):
    """SIGTERM, raised in the main thread so that every cleanup on the way out runs."""


def _on_terminate(signum, frame):  # noqa: ARG001 - signal handler signature
    raise Terminated()


class _Parser(argparse.ArgumentParser):
    """argparse that raises instead of exiting, so usage errors map to exit code 2 here."""

    def error(self, message: str):  # noqa: D102 - argparse hook
        raise UserError(f"{self.prog}: {message}\n{self.format_usage().rstrip()}")


def _parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="appendix", description="The statistics appendix of a designed "
                     "study, computed exactly as its registered analysis plan fixed it.")
    parser.add_argument("--version", action="version", version=f"appendix {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    check = commands.add_parser("check", help="validate plan and data, list what a run "
                                "would compute; writes nothing")
    check.add_argument("study", type=Path, help="the study file (YAML)")
    run = commands.add_parser("run", help="compute and render into out/<study id>/")
    run.add_argument("study", type=Path, help="the study file (YAML)")
    run.add_argument("--out", type=Path, help="run folder (default: out/<study id>/)")
    run.add_argument("--no-pdf", action="store_true", help="write the HTML only")
    run.add_argument("--paper", choices=["A4", "Letter"], default="A4", help="PDF page size")
    run.add_argument("--strict", action="store_true", help="exit 1 (after writing the run) "
                     "while any deviation from the registered plan is not acknowledged")
    lock = commands.add_parser("lock", help="register the plan: write study.lock.json beside "
                               "the study file (canonical plan, hash, time)")
    lock.add_argument("study", type=Path, help="the study file (YAML)")
    lock.add_argument("--relock", action="store_true", help="record a changed plan as a "
                      "revision of the lock (needs --reason)")
    lock.add_argument("--reason", help="why the registered plan is revised (with --relock)")
    diff = commands.add_parser("diff", help="what changed between two run folders: "
                               "conclusions, estimates, data, plan, checksums")
    diff.add_argument("run_a", type=Path, help="the earlier run folder")
    diff.add_argument("run_b", type=Path, help="the later run folder")
    diff.add_argument("--json", action="store_true", help="print the diff as JSON")
    diff.add_argument("--html", type=Path, help="also write the diff as an HTML page here")
    pack = commands.add_parser("pack", help="the reviewer package of a run folder (zip)")
    pack.add_argument("run", type=Path, help="the run folder")
    pack.add_argument("--out", type=Path, help="the package file (default: <run folder>.zip)")
    verify = commands.add_parser("verify", help="check every hash of a package, recompute "
                                 "from its plan and data, compare")
    verify.add_argument("package", type=Path, help="the package (zip)")
    commands.add_parser("selftest", help="run the published reference checks on this "
                        "installation and report")
    return parser


def _command(name: str):
    """The module of a command (`appendix.commands`); loaded only once a command is parsed,
    and each loads its libraries only when it runs, so `--version` loads none."""
    from appendix.commands import check, diff, lock, pack, run, selftest, verify

    return {"check": check, "diff": diff, "lock": lock, "pack": pack, "run": run,
            "selftest": selftest, "verify": verify}[name]


def _log_bug(error: BaseException, directory: Path, now: _dt.datetime) -> Path:
    from appendix.versions import software_versions

    path = directory / f"appendix-error-{now:%Y%m%dT%H%M%S}.log"
    lines = [f"appendix {__version__} internal error at {now.isoformat()}",
             *(f"{s.name} {s.version}" for s in software_versions()), "",
             "".join(traceback.format_exception(error))]
    path.write_text("\n".join(lines), encoding="utf-8")
    return path


def main(argv: Sequence[str] | None = None, *, stdout: TextIO | None = None,
         stderr: TextIO | None = None, cwd: Path | None = None,
         clock: Callable[[], _dt.datetime] | None = None) -> int:
    """Run one command; return its exit code. Paths, streams and clock are injectable."""
    out, err = stdout or sys.stdout, stderr or sys.stderr
    clock = clock or (lambda: _dt.datetime.now(_dt.timezone.utc))
    cwd = cwd or Path.cwd()
    try:
        source_date(os.environ)  # libraries imported below read it too, and fail on a bad one
        args = _parser().parse_args(list(sys.argv[1:] if argv is None else argv))
        if args.command is None:
            print(_parser().format_help(), file=err)
            return USAGE
        return _command(args.command).run(args, CommandIO(out=out, err=err, cwd=cwd, clock=clock))
    except SystemExit as done:  # --help and --version print, then ask to exit
        return int(done.code or 0)
    except KeyboardInterrupt:  # Ctrl-C: staging folders are already removed on the way out
        print("stopped (interrupted); nothing was replaced", file=err)
        return INTERRUPTED
    except Terminated:
        print("stopped (terminated); nothing was replaced", file=err)
        return TERMINATED
    except BrokenPipeError:  # the reader of our output stopped early (e.g. `| head`)
        return OK
    except UserError as error:
        print(f"error: {error}", file=err)
        return USAGE
    except OSError as error:
        if error.errno in _MACHINE_ERRNOS:  # a full or read-only disk, no permission, full stdout
            where = f" ({error.filename})" if error.filename else ""
            print(f"error: cannot write or read{where}: {error.strerror}; nothing was replaced",
                  file=err)
            return USAGE
        return _bug(error, cwd, clock, err)
    except Exception as error:  # a bug: say so, log it, never a bare traceback
        return _bug(error, cwd, clock, err)


def _bug(error: BaseException, cwd: Path, clock, err: TextIO) -> int:
    try:
        where = f"details were written to {_log_bug(error, cwd, clock())}"
    except OSError as failed:  # the log itself could not be written
        where = f"no log could be written ({failed.strerror})"
    print(f"internal error (a bug in appendix): {error!r}\n{where}", file=err)
    return BUG


def console() -> None:
    """Entry point of the `appendix` console script: SIGTERM stops cleanly, like Ctrl-C."""
    import signal

    signal.signal(signal.SIGTERM, _on_terminate)
    code = main()
    try:
        sys.stdout.flush()  # a full stdout shows here, after the command, when it is a file
    except BrokenPipeError:
        pass
    except OSError as error:
        print(f"error: cannot write the output: {error.strerror}", file=sys.stderr)
        code = USAGE
    try:  # nothing left for the interpreter's own flush to fail on
        sys.stdout = open(os.devnull, "w")  # noqa: SIM115 - held until the process ends
    except OSError:
        pass
    sys.exit(code)
