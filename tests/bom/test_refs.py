"""Reference designator expansion and its errors."""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from partcheck.bom.read import MAX_EXPANSION, expand_refs
from partcheck.errors import BomError


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("C1-C4", ("C1", "C2", "C3", "C4")),
        ("C1, C2 C3", ("C1", "C2", "C3")),
        ("R1..R3", ("R1", "R2", "R3")),
        ("C7-9", ("C7", "C8", "C9")),
        ("C7 - C9", ("C7", "C8", "C9")),
        ("R1 .. R2, R5", ("R1", "R2", "R5")),
        ("C10–C12", ("C10", "C11", "C12")),  # en dash
        ("D1;D2", ("D1", "D2")),
        ("TVS1", ("TVS1",)),
        ("U3A", ("U3A",)),
        ("C5-C5", ("C5",)),
        ("", ()),
    ],
)
def test_expand(text, expected):
    assert expand_refs(text) == expected


def test_backwards_range_is_an_error():
    with pytest.raises(BomError) as info:
        expand_refs("C4-C1")
    assert str(info.value) == "reference range 'C4-C1' runs backwards; write it as C1-C4"


def test_range_across_prefixes_is_an_error():
    with pytest.raises(BomError) as info:
        expand_refs("C1-R3")
    assert "runs from prefix 'C' to 'R'" in str(info.value)


def test_huge_range_is_an_error():
    with pytest.raises(BomError) as info:
        expand_refs("R1-R20000")
    assert "would expand to 20,000 references" in str(info.value)
    assert f"at most {MAX_EXPANSION:,}" in str(info.value)


def test_largest_allowed_range():
    refs = expand_refs(f"R1-R{MAX_EXPANSION}")
    assert len(refs) == MAX_EXPANSION and refs[-1] == f"R{MAX_EXPANSION}"


def test_range_end_not_a_reference():
    with pytest.raises(BomError, match="'C1x!' is not a reference"):
        expand_refs("C0-C1x!")


@given(prefix=st.sampled_from(["C", "R", "D", "TVS", "Q"]), first=st.integers(0, 500), count=st.integers(1, 300),
       sep=st.sampled_from(["-", "..", " - ", "–"]))
def test_range_expands_to_every_number_once(prefix, first, count, sep):
    last = first + count - 1
    refs = expand_refs(f"{prefix}{first}{sep}{prefix}{last}")
    assert refs == tuple(f"{prefix}{n}" for n in range(first, last + 1))
