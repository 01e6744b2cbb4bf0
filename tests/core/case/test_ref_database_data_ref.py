"""A case built on a database table records the source in its data reference, and reads it back.

Written against the mutants that survived the case tests (tests/MUTATION.md): no test in the selection
wrote a data reference with a database source (``DataRef.as_dict``).  The expectation is the round trip
itself [definition: what is written is what is read]; the source is a real ``SqlSource`` (no database is
opened).
"""
from workbench.core.case.format import DataRef, data_ref_from_dict
from workbench.core.data.sql import SqlSource
from workbench.core.model import Layout, LayoutRequest


def test_a_database_source_is_written_under_source_and_read_back():
    """Kills ``out["source"]`` set to None or written under another key (``XXsourceXX``, ``SOURCE``)."""
    src = SqlSource("sqlite:///lines.db", table="readings", order=("taken",))
    ref = DataRef("sqlite:///lines.db", "0" * 64, 12, 345, Layout("wide"), LayoutRequest(), src)
    d = ref.as_dict()
    assert d["source"] == src.as_dict()
    back = data_ref_from_dict(d, "cases/line.case.json")
    assert back.source == src and back.as_dict() == d
    plain = DataRef("line.csv", "0" * 64, 12, 345, Layout("wide"), LayoutRequest())
    assert "source" not in plain.as_dict()
