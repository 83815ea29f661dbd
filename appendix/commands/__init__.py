"""The commands, one module each (``appendix <name>`` is `appendix.commands.<name>`).

Each exposes ``run(args, io) -> int``: it calls the libraries, writes what they return to
`io` (`appendix.commands.context.CommandIO`) and maps it to an exit code, 0 done or 1 done
with something the user must see. The libraries never print and never return exit codes;
their `appendix.errors.UserError` goes up to `appendix.cli`, which prints its sentence and
exits 2 (anything else is a bug: exit 3 with a log).
"""
