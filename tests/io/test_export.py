"""Parquet export: every column and the metadata round-trip exactly; failures leave nothing."""

import json
import os
import sys
from pathlib import Path

import awkward as ak
import numpy as np
import pyarrow.parquet as pq
import pytest
import uproot

from toymc.errors import InputFileError, OutputError, ToymcError
from toymc.io.export import export, read_parquet
from toymc.io.ntuple import read_meta


@pytest.mark.parametrize("name", ["alp_3pi_bka", "alp_gg_bksta"])
def test_parquet_round_trip(demo_files, tmp_path, name):
    src = demo_files[name]
    out = tmp_path / "ev.parquet"
    s = export(src, output=out, step_size=1000)
    assert s == {"output": str(out), "events": 3000, "format": "parquet"}
    assert pq.ParquetFile(out).num_row_groups == 3
    with uproot.open(src) as f:
        ref = f["events"].arrays()
    back = ak.from_parquet(out)
    assert back.fields == ref.fields
    for col in ref.fields:
        assert ak.array_equal(back[col], ref[col], dtype_exact=True, equal_nan=True), col
    # metadata: in awkward's attrs and, for pyarrow-only readers, in the key-value metadata
    assert back.attrs["toymc_meta"] == read_meta(src)
    kv = pq.read_schema(out).metadata
    assert json.loads(kv[b"AWKWARD_ATTRS"])["toymc_meta"] == read_meta(src)
    ev, meta = read_parquet(out)
    assert meta == read_meta(src)
    np.testing.assert_allclose(ak.to_numpy(ev.llp.mass), ak.to_numpy(ev.llp_m), rtol=1e-9)
    assert ak.array_equal(ev.dau.pdg, ref.dau_pdg)


def test_default_output_name_and_rules(demo_files, tmp_path):
    src = tmp_path / "dp.root"
    src.write_bytes(Path(demo_files["darkphoton_mumu"]).read_bytes())
    s = export(src)
    assert s["output"] == str(tmp_path / "dp.parquet")
    with pytest.raises(OutputError, match="exists; use --force"):
        export(src)
    export(src, force=True)
    with pytest.raises(OutputError, match="is the input"):
        export(src, output=src, force=True)
    with pytest.raises(OutputError, match="does not exist"):
        export(src, output=tmp_path / "nowhere" / "x.parquet")
    assert sorted(os.listdir(tmp_path)) == ["dp.parquet", "dp.root"]


@pytest.mark.parametrize("kind", ["text", "foreign", "truncated", "damaged", "missing"])
def test_export_bad_input_leaves_nothing(bad_files, tmp_path, kind):
    with pytest.raises(InputFileError) as err:
        export(bad_files[kind], output=tmp_path / "x.parquet")
    assert "\n" not in str(err.value) and bad_files[kind] in str(err.value)
    assert os.listdir(tmp_path) == []


def test_missing_pyarrow_gives_install_hint(demo_files, tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "pyarrow", None)
    monkeypatch.setitem(sys.modules, "pyarrow.parquet", None)
    with pytest.raises(ToymcError, match=r'pip install "toymc\[parquet\]"'):
        export(demo_files["darkphoton_mumu"], output=tmp_path / "x.parquet")
    assert os.listdir(tmp_path) == []


def test_read_parquet_checks(demo_files, tmp_path):
    out = tmp_path / "ev.parquet"
    export(demo_files["darkphoton_mumu"], output=out)
    with pytest.raises(InputFileError, match="no column.*llp_zz"):
        read_parquet(out, columns=["llp_zz"])
    ev, _ = read_parquet(out, columns=["llp_px", "llp_py", "llp_pz", "llp_e"])
    assert ev.fields == ["llp_px", "llp_py", "llp_pz", "llp_e", "llp"]
    plain = tmp_path / "plain.parquet"
    ak.to_parquet(ak.Array({"x": [1, 2]}), plain)
    with pytest.raises(InputFileError, match="not a toymc export"):
        read_parquet(plain)
    (tmp_path / "t.parquet").write_text("no")
    with pytest.raises(InputFileError, match="not a readable Parquet"):
        read_parquet(tmp_path / "t.parquet")
