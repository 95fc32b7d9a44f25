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
