"""`appendix run STUDY [--out DIR] [--no-pdf] [--paper A4|Letter] [--strict]`: compute and
render into the run folder; print each outcome's decision. With ``--strict``, exit 1 (after
writing the run) while a deviation from the registered plan is not acknowledged."""

from __future__ import annotations

from appendix.commands.context import FINDINGS, OK, CommandIO


def run(args, io: CommandIO) -> int:
    from appendix import api
    from appendix.render import RenderOptions

    tty = io.err.isatty()

    def progress(message: str) -> None:
        if tty:  # long runs show progress on a terminal and stay quiet elsewhere
            print(f"  {message} ...", file=io.err, flush=True)

    record = api.run(io.path(args.study), io.path(args.out) if args.out else None,
                     out_root=io.cwd / "out", options=RenderOptions(paper=args.paper),
                     pdf=not args.no_pdf, clock=io.clock, progress=progress,
                     notice=lambda note: print(f"note: {note}", file=io.err))
    io.say(f"wrote {record.folder}", *decision_lines(record.results))
    pending = api.unacknowledged(record.results)
    if args.strict and pending:
        print(f"strict: {len(pending)} deviation{'s' if len(pending) != 1 else ''} from the "
              "registered plan not acknowledged (see the plan's deviations key):", file=io.err)
        for deviation in pending:
            print(f"  {deviation.kind} ({deviation.subject}): {deviation.message}", file=io.err)
        return FINDINGS
    return OK


def decision_lines(results) -> list[str]:
    """One line per outcome, the same for every design: the outcome's label and role, then
    each tested term with its decision in the appendix's words, ``  Shoot dry mass
    (primary): Seed coating (F test): rejected``, ``  Yield (primary): Coating: rejected;
    Irrigation: not rejected``."""
    from appendix.compare import DECISION_WORDS, term_conclusions

    lines = []
    for outcome in results.outcomes:
        found = [(label.removeprefix(f"{outcome.label}: "), decision.decision)
                 for _, label, decision in term_conclusions(results, outcome)]
        said = "; ".join(f"{term[:1].upper()}{term[1:]}: {DECISION_WORDS.get(d, d)}"
                         for term, d in found) or "no conclusion"
        lines.append(f"  {outcome.label[:1].upper()}{outcome.label[1:]} ({outcome.role}): {said}")
    return lines
