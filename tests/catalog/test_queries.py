"""list / get / find / remove / count."""

from __future__ import annotations

import pytest

from partcheck.errors import CatalogInputError, NotFoundError


def numbers(records):
    return [r.part_number for r in records]


def test_parts_filters(catalog):
    assert len(catalog.parts()) == 12
    assert numbers(catalog.parts(category="switch")) == ["TST-SW-150V-8A", "TST-SW-650V-2A"]
    assert numbers(catalog.parts(category="diode", subtype="ultrafast")) == ["TST-D-600V-1A"]
    assert numbers(catalog.parts(subtype="ceramic")) == ["TST-C-10U-25V"]
    assert numbers(catalog.parts(min_ratings={"vds_max": "200 V"})) == ["TST-SW-650V-2A"]
    assert numbers(catalog.parts(min_ratings={"vds_max": 150.0})) == ["TST-SW-150V-8A", "TST-SW-650V-2A"]
    # a part without the rating is not "at least" anything
    assert numbers(catalog.parts(category="capacitor", min_ratings={"v_rated": "30V", "ripple_current": "1A"})) == [
        "TST-C-470U-35V"]
    assert catalog.parts(min_ratings={"v_rated": "1 kV"}) == []
    assert catalog.parts(category="capacitor")[0].curves["dc_bias"][0] == (0.0, 1.0)


def test_parts_filter_errors(catalog):
    with pytest.raises(CatalogInputError) as info:
        catalog.parts(min_ratings={"vds_max": "22uF"})
    assert str(info.value) == "column 'vds_max': '22uF' is not a voltage (V) (the unit says a capacitance (F))"
    with pytest.raises(CatalogInputError, match="no numeric column 'vrm'; did you mean 'vrrm'"):
        catalog.parts(min_ratings={"vrm": 10})
    with pytest.raises(CatalogInputError, match="unknown category 'switches'; did you mean 'switch'"):
        catalog.parts(category="switches")
    with pytest.raises(CatalogInputError, match="unknown subtype 'gan'; expected one of thick_film"):
        catalog.parts(category="resistor", subtype="gan")


def test_get_and_not_found_hint(catalog):
    assert catalog.get("TST-Z-150V").v_breakdown == 150.0
    with pytest.raises(NotFoundError) as info:
        catalog.get("TST-SW-150V-9A")
    assert str(info.value) == ("part 'TST-SW-150V-9A' is not in the catalog (closest: TST-SW-150V-8A, "
                               "TST-SW-650V-2A, TST-Z-150V); add it with `partcheck catalog add`")
    assert isinstance(info.value, LookupError)


def test_find_ranks_part_numbers_and_descriptions(catalog):
    hits = catalog.find("electrolytic 470")
    assert hits[0][0].part_number == "TST-C-470U-35V"
    assert all(0 <= score <= 100 for _, score in hits)
    assert [s for _, s in hits] == sorted((s for _, s in hits), reverse=True)
    assert catalog.find("TST-SW-150V-8A", limit=1)[0][0].part_number == "TST-SW-150V-8A"
    # every word of the query in one part beats a part sharing most of them, in any order
    top = catalog.find("650 V GaN switch", limit=2)
    assert top[0][0].part_number == "TST-SW-650V-2A" and top[0][1] == 100.0 and top[1][1] < 100.0
    only = catalog.find("test", limit=50, category="diode")
    assert {r.category for r, _ in only} == {"diode"} and len(only) == 2
    assert len(catalog.find("test", limit=3)) == 3
    assert catalog.find("zzzzqqqq") == []
    with pytest.raises(CatalogInputError, match="the search text is empty"):
        catalog.find("  ")


def test_remove_and_count(catalog):
    assert catalog.count() == 12 and catalog.count("capacitor") == 2
    removed = catalog.remove("TST-C-10U-25V")
    assert removed.curves["dc_bias"][2] == (25.0, 0.3)
    assert catalog.count() == 11 and catalog.count("capacitor") == 1
    with catalog._engine.connect() as conn:  # its curve points went with it
        assert conn.exec_driver_sql("select count(*) from curve_point").scalar() == 5
    with pytest.raises(NotFoundError, match="part 'TST-C-10U-25V' is not in the catalog"):
        catalog.remove("TST-C-10U-25V")
