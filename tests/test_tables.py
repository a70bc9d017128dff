"""How tables are written: stable CSV bytes, ordinary permissions, Parquet beside CSV."""

from __future__ import annotations

import os
import stat

import pandas as pd
import pytest

from sdmnet.output.tables import write_json, write_table


def _frame() -> pd.DataFrame:
    return pd.DataFrame({"architecture": ["a", "b"], "blocking": [0.1 + 0.2, 1 / 3], "blocked": [3, 4]})


def test_same_numbers_give_the_same_bytes(tmp_path):
    one = write_table(_frame(), tmp_path / "one.csv").read_bytes()
    two = write_table(_frame(), tmp_path / "two.csv").read_bytes()
    assert one == two
    assert b"0.3333333333" in one  # ten significant digits, no float noise such as 0.30000000000000004
    assert b"0.30000000000000004" not in one


def test_files_get_ordinary_permissions_and_no_temporary_is_left(tmp_path):
    umask = os.umask(0o022)
    try:
        path = write_table(_frame(), tmp_path / "t.csv")
        js = write_json({"x": 1}, tmp_path / "run.json")
    finally:
        os.umask(umask)
    for p in (path, js):
        assert stat.S_IMODE(p.stat().st_mode) == 0o644
    assert not list(tmp_path.glob(".tmp-*"))


def test_parquet_is_written_beside_csv_when_pyarrow_is_installed(tmp_path):
    pytest.importorskip("pyarrow")
    write_table(_frame(), tmp_path / "t.csv")
    back = pd.read_parquet(tmp_path / "t.parquet")
    pd.testing.assert_frame_equal(back, _frame())
