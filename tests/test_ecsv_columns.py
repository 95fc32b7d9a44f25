"""The small ECSV reader (planner.inputs.ecsv_columns) against astropy's table reader.

Reference: astropy.table's ECSV reader (the general implementation of the ECSV
1.0 standard) gives, for every column of the bundled catalog and of the demo's
tables, the same values the small reader does.
"""

from __future__ import annotations

import math

import pytest

from planner.inputs.catalog import load_catalog
from planner.inputs.ecsv_columns import NotPlainEcsv, read_plain_ecsv
from planner.inputs.resources import catalog_path


def _astropy_columns(path):
    import numpy as np
    from astropy.table import Table

    table = Table.read(path, format="ascii.ecsv")
    out = {}
    for name in table.colnames:
        column = np.ma.asarray(table[name])
        if column.dtype.kind in "fiub":
            out[name] = [None if (v is np.ma.masked or math.isnan(v)) else float(v)
                         for v in np.ma.filled(column.astype(float), np.nan).tolist()]
        else:
            out[name] = [str(v) for v in np.ma.filled(column.astype(str), "").tolist()]
    return out


def _ours(path):
    datatypes, cells = read_plain_ecsv(path)
    out = {}
    for name, values in cells.items():
        if datatypes[name] == "string":
            out[name] = values
        else:
            out[name] = [None if not v or math.isnan(float(v)) else float(v) for v in values]
    return out


@pytest.mark.parametrize("path", [
    catalog_path(),
    catalog_path().parent / "demo" / "clusters.ecsv",
    catalog_path().parent / "demo" / "variables.ecsv",
])
def test_every_column_equals_astropy(path):
    ours, theirs = _ours(path), _astropy_columns(path)
    assert list(ours) == list(theirs)
    for name in theirs:
        assert ours[name] == theirs[name], name


def test_catalog_entries_equal_astropy_read(monkeypatch):
    """load_catalog through the small reader and through astropy (the fallback) agree entry by entry."""
    import planner.inputs.ecsv_columns as ecsv_columns

    fast = load_catalog()

    def refuse(path):
        raise NotPlainEcsv("forced fallback")

    monkeypatch.setattr(ecsv_columns, "read_plain_ecsv", refuse)
    slow = load_catalog()
    assert len(fast.entries) == 157
    assert fast.entries == slow.entries


_TWO_COLUMNS = """# %ECSV 1.0
# ---
# datatype:
# - {name: a, datatype: string}
# - {name: b, unit: deg, datatype: float64}
# schema: astropy-2.0
a b
"""


def test_quotes_commas_and_missing(tmp_path):
    path = tmp_path / "t.ecsv"
    path.write_text(_TWO_COLUMNS + '"x y" 1.5\n"say ""hi""" ""\n')
    assert read_plain_ecsv(path) == ({"a": "string", "b": "float64"},
                                     {"a": ["x y", 'say "hi"'], "b": ["1.5", ""]})
    assert _ours(path) == _astropy_columns(path)
    comma = tmp_path / "c.ecsv"
    comma.write_text(_TWO_COLUMNS.replace("# schema", "# delimiter: ','\n# schema").replace("a b\n", "a,b\n")
                     + '"x, y",2\n')
    assert read_plain_ecsv(comma)[1] == {"a": ["x, y"], "b": ["2"]}
    assert _ours(comma) == _astropy_columns(comma)


@pytest.mark.parametrize("content", [
    "name,ra\nx,1\n",  # not ECSV
    _TWO_COLUMNS.replace("float64}", "string, subtype: 'float64[2]'}") + 'x "[1,2]"\n',  # a multidimensional column
    _TWO_COLUMNS.replace("a b\n", "a c\n") + "x 1\n",  # names do not match the header
    _TWO_COLUMNS + "x 1 2\n",  # a cell too many
    _TWO_COLUMNS.replace("# - {name: a, datatype: string}\n", "# - {name: a, datatype: object}\n") + "x 1\n",
])
def test_anything_else_is_left_to_astropy(tmp_path, content):
    path = tmp_path / "t.ecsv"
    path.write_text(content)
    with pytest.raises(NotPlainEcsv):
        read_plain_ecsv(path)


_TARGET_TABLE = """# %ECSV 1.0
# ---
# datatype:
# - {name: name, datatype: string}
# - {name: ra_deg, unit: deg, datatype: float64}
# - {name: dec_deg, datatype: float64}
# - {name: priority, datatype: int64}
# - {name: comment, datatype: string, description: 'a unit: rad in the text'}
# schema: astropy-2.0
name ra_deg dec_deg priority comment
"Field A" 10.5 -30.25 2 "  padded  "
"Field B" "" nan "" ""
"""


def _native(rows):
    """astropy's rows with numpy floats (the unit factor's product) as Python floats."""
    return [({k: float(v) if isinstance(v, float) else v for k, v in cells.items()}, written)
            for cells, written in rows]


@pytest.mark.parametrize("text", [_TARGET_TABLE, (catalog_path().parent / "demo" / "clusters.ecsv").read_text()])
def test_target_tables_equal_astropy_read(text):
    """Target lists read without astropy give what astropy's reader gives: the same
    types, stripped text, None where a cell is empty."""
    from planner.inputs import target_rows

    fast = target_rows._plain_ecsv_rows(text, "t.ecsv")
    assert fast is not None
    assert repr(fast) == repr(_native(target_rows._astropy_ecsv_rows(text, "t.ecsv")))


@pytest.mark.parametrize("text", [
    _TARGET_TABLE,
    (catalog_path().parent / "demo" / "clusters.ecsv").read_text(),
    (catalog_path().parent / "demo" / "variables.ecsv").read_text(),
    catalog_path().read_text(),
])
def test_variable_tables_equal_astropy_read(text):
    from astropy.table import Table

    from planner.inputs import variable_files

    table = Table.read(text, format="ascii.ecsv")
    columns = [str(c) for c in table.colnames]
    slow = columns, [{c: variable_files._ecsv_cell(table[c], i) for c in columns} for i in range(len(table))]
    assert repr(variable_files._plain_ecsv_rows(text)) == repr(slow)


@pytest.mark.parametrize("change", [
    ("ra_deg, unit: deg", "ra_deg, unit: hourangle"),  # a unit to convert
    ("priority, datatype: int64", "priority, datatype: float32"),  # float32's values differ from float()'s
    ('"Field A" 10.5', '"Field A" 10,5'),  # a cell astropy reports on
])
def test_target_tables_beyond_plain_go_through_astropy(change):
    from planner.inputs import target_rows

    assert target_rows._plain_ecsv_rows(_TARGET_TABLE.replace(*change), "t.ecsv") is None
