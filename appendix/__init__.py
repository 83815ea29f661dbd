"""appendix: the statistics appendix of a designed study, from its registered analysis plan."""

__version__ = "0.1.0"
