"""`appendix diff RUN_A RUN_B [--json] [--html PAGE]`: what changed between two run folders;
exit 1 when any conclusion changed."""

from __future__ import annotations

from appendix.commands.context import FINDINGS, OK, CommandIO


def run(args, io: CommandIO) -> int:
    from appendix import compare
    from appendix.staging import write_atomically
    from appendix.targets import check_file_target, is_diff_page

    run_a, run_b = io.path(args.run_a), io.path(args.run_b)
    page = io.path(args.html) if args.html else None
    if page is not None:  # refused before any work, and before anything is printed
        check_file_target(page, (run_a, run_b), "diff page", is_diff_page, "--html")
    diff = compare.compare_runs(run_a, run_b)
    if args.json:
        io.out.write(compare.to_json(diff))
    else:
        io.say(*compare.report_lines(diff))
    if page is not None:
        write_atomically(page, compare.render_page(diff).encode("utf-8"))
        if not args.json:
            io.say(f"wrote {page}")
    return FINDINGS if diff.conclusions_changed else OK
