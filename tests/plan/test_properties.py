"""Properties of the YAML reader over generated documents (hypothesis)."""

from __future__ import annotations

import yaml
from hypothesis import given
from hypothesis import strategies as st

from appendix.plan.yamltree import read_tree

_SCALARS = st.one_of(st.none(), st.booleans(), st.integers(), st.text(max_size=12),
                     st.floats(allow_nan=False))
_VALUES = st.recursive(_SCALARS, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.text(min_size=1, max_size=8), inner, max_size=4)),
    max_leaves=12)


@given(st.dictionaries(st.text(min_size=1, max_size=8), _VALUES, min_size=1, max_size=5))
def test_reads_back_what_pyyaml_dumps(document):
    # yaml.safe_dump (PyYAML 6.0.3) quotes every string a YAML 1.1 reader would type, so a
    # YAML 1.2 core reader must give back the same values.
    tree = read_tree(yaml.safe_dump(document))
    assert tree.value == document
    assert tree.problems == ()
