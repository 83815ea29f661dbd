"""The names of the files appendix writes and reads back, each defined once.

A run folder (`appendix run`) holds `RESULTS_FILE`, `HTML_FILE`, `PDF_FILE`, the
`FIGURES_FOLDER`, `RECORDS_FILE` and, written last, `MANIFEST_FILE`; the registration lock
`LOCK_FILE` lies beside the study file; a reviewer package (`appendix pack`) holds
`NOTE_FILE`, `SUMS_FILE`, `ENVIRONMENT_FILE` and the study and run folders.

>>> figure_file("dry_mass-qq")
'figures/dry_mass-qq.svg'
"""

RESULTS_FILE = "results.json"
HTML_FILE = "appendix.html"
PDF_FILE = "appendix.pdf"
FIGURES_FOLDER = "figures"
RECORDS_FILE = "records.json"
MANIFEST_FILE = "manifest.json"
LOCK_FILE = "study.lock.json"

SUMS_FILE = "SHA256SUMS"
NOTE_FILE = "VERIFY.txt"
ENVIRONMENT_FILE = "environment.json"

#: What a run folder must hold to be packed.
RUN_FILES = (RESULTS_FILE, HTML_FILE, PDF_FILE, MANIFEST_FILE)
#: Entries every reviewer package holds, by which one is recognised.
PACKAGE_ENTRIES = (SUMS_FILE, NOTE_FILE)


def figure_file(key: str) -> str:
    """The run folder's relative path of the figure `key` (``{outcome}-{kind}``)."""
    return f"{FIGURES_FOLDER}/{key}.svg"
