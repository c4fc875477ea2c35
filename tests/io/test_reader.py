"""Reader: exact round trip of every column, vector behaviours, selections, bad input."""

import awkward as ak
import numpy as np
import pytest
import uproot
import vector
from _samples import CONFIGS, DEMOS, N_SMALL

import toymc
from toymc.errors import InputFileError, ToymcError
from toymc.io.ntuple import read_meta
from toymc.io.reader import iterate, read


def _stored_columns(path):
    with uproot.open(path) as f:
        return list(f["events"].keys())


@pytest.mark.parametrize("name", DEMOS)
def test_every_column_round_trips_exactly(demo_files, name):
    """Every stored column read back equals the generator's in-memory arrays bit for bit."""
    path = demo_files[name]
    ev = read(path)
    gen = toymc.generate(CONFIGS / f"{name}.toml", events=N_SMALL, seed=11)
    table = [c[0] for c in read_meta(path)["columns"]]
    stored = _stored_columns(path)
    assert sorted(stored) == sorted(table)  # the documented table is exactly what is stored
    groups = [f for f in gen.fields if gen[f].ndim == 2]
    for col in stored:
        if col.startswith("n") and col[1:] in groups:
            expect = ak.num(gen[col[1:]], axis=1)
            assert ak.all(ev[col] == expect), col
            continue
        g = next((g for g in groups if col.startswith(g + "_")), None)
        expect = gen[g][col[len(g) + 1:]] if g else gen[col]
        assert ak.array_equal(ev[col], expect, dtype_exact=True, equal_nan=True), col


def test_chunked_reading_equals_one_piece(demo_files):
    path = demo_files["alp_3pi_bka"]
    whole = read(path)
    chunks = list(iterate(path, step_size=700))
    assert [len(c) for c in chunks] == [700] * (N_SMALL // 700) + [N_SMALL % 700]
    joined = ak.concatenate(chunks)
    for col in _stored_columns(path):
        assert ak.array_equal(joined[col], whole[col], dtype_exact=True, equal_nan=True), col


def test_many_files_in_order(demo_files):
    a, b = demo_files["alp_3pi_bka"], demo_files["alp_gg_bksta"]
    ev = read([a, b], step_size=1000)
    assert len(ev) == 2 * N_SMALL
    assert ak.array_equal(ev.rcld_px[N_SMALL:], read(b).rcld_px)
    assert ak.array_equal(ev.llp_m[:N_SMALL], read(a).llp_m)


@pytest.mark.parametrize("name", DEMOS)
def test_vector_masses_match_stored_and_daughters(demo_files, name):
    """vector's invariant mass of (px, py, pz, E) equals llp_m; the status-1 daughters sum to
    the LLP four-momentum.  Reference: the `vector` package (Momentum4D.mass) against an
    independent numpy sqrt(E^2 - p^2); tolerance: double rounding amplified by (E/m)^2 < 1e4."""
    ev = read(demo_files[name])
    m_vec = ak.to_numpy(ev.llp.mass)
    m_np = np.sqrt(ak.to_numpy(ev.llp_e) ** 2 - ak.to_numpy(ev.llp_px) ** 2
                   - ak.to_numpy(ev.llp_py) ** 2 - ak.to_numpy(ev.llp_pz) ** 2)
    m_stored = ak.to_numpy(ev.llp_m)
    np.testing.assert_allclose(m_vec, m_stored, rtol=1e-9)
    np.testing.assert_allclose(m_vec, m_np, rtol=1e-12)
    final = ev.dau[ev.dau.status == 1]
    total = ak.sum(final, axis=1)
    np.testing.assert_allclose(ak.to_numpy(total.mass), m_stored, rtol=1e-9)
    np.testing.assert_allclose(ak.to_numpy(total.px), ak.to_numpy(ev.llp_px), atol=1e-12)
    # transverse momenta against numpy, and the records' other fields
    pt = np.hypot(ak.to_numpy(ak.flatten(ev.dau_px)), ak.to_numpy(ak.flatten(ev.dau_py)))
    np.testing.assert_allclose(ak.to_numpy(ak.flatten(ev.dau.pt)), pt, rtol=1e-14)
    np.testing.assert_allclose(ak.to_numpy(ev.rcl.pt), np.hypot(ev.rcl_px, ev.rcl_py), rtol=1e-14)
    assert ak.array_equal(ev.dau.pdg, ev.dau_pdg)
    assert isinstance(ev.llp, vector.backends.awkward.MomentumArray4D)


def test_recoil_daughters_sum_to_kstar(demo_files):
    """K* -> K pi daughters (rcld) add up to the recoil four-momentum (rcl)."""
    ev = read(demo_files["alp_gg_bksta"], columns=["rcl", "rcld"])
    s = ak.sum(ev.rcld, axis=1)
    np.testing.assert_allclose(ak.to_numpy(s.mass), ak.to_numpy(ev.rcl.mass), rtol=1e-9)


def test_column_selection(demo_files):
    path = demo_files["darkphoton_mumu"]
    ev = read(path, columns=["llp", "dau", "llp_dr"])
    assert set(ev.fields) == {"llp_px", "llp_py", "llp_pz", "llp_e", "llp_dr", "llp", "ndau",
                              "dau", *[f"dau_{f}" for f in ("px", "py", "pz", "e", "vx", "vy",
                                                            "vz", "pdg", "q", "status", "mother")]}
    assert ak.all(ev.ndau == 2)
    only = read(path, columns=["dau_px"])
    assert set(only.fields) == {"dau_px", "ndau", "dau"}
    assert not hasattr(only.dau, "mass")  # px alone is no four-vector


def test_missing_column_is_named(demo_files):
    with pytest.raises(InputFileError, match=r"no column\(s\) llp_dR \(did you mean 'llp_dr'\?\)"
                       r", zz_none"):
        read(demo_files["darkphoton_mumu"], columns=["llp_dR", "zz_none", "llp_m"])


def test_empty_column_selection(demo_files):
    with pytest.raises(ToymcError, match="selects no stored column"):
        read(demo_files["darkphoton_mumu"], columns=[])
    with pytest.raises(ToymcError, match="selects no stored column"):
        read(demo_files["darkphoton_mumu"], columns=["w_lumi"], lumi_fb=1,
             overrides={"eps": 1e-3, "br_decay": 1.0})


def test_cut_callable(demo_files):
    path = demo_files["alp_3pi_bka"]
    whole = read(path)
    sel = read(path, cut=lambda ev: (ev.llp_dr > 10.0) & (ev.llp.pt > 0.5), step_size=500)
    mask = (whole.llp_dr > 10.0) & (np.hypot(whole.llp_px, whole.llp_py) > 0.5)
    assert 0 < len(sel) < len(whole)
    assert ak.array_equal(sel.llp_ct, whole.llp_ct[mask])
    assert len(read(path, cut=lambda ev: ev.llp_m < 0)) == 0


def test_cut_strings_are_refused(demo_files):
    with pytest.raises(ToymcError, match="strings are not evaluated"):
        read(demo_files["alp_3pi_bka"], cut="llp_dr > 1")
    with pytest.raises(ToymcError, match="one boolean per event"):
        read(demo_files["alp_3pi_bka"], cut=lambda ev: ev.llp_dr)


@pytest.mark.parametrize("kind", ["text", "foreign", "truncated", "damaged", "missing"])
def test_bad_input_one_line(bad_files, kind):
    with pytest.raises(InputFileError) as err:
        read(bad_files[kind])
    msg = str(err.value)
    assert "\n" not in msg and bad_files[kind] in msg


def test_mixed_schema_versions(tmp_path, demo_files, monkeypatch):
    """A file written by a toymc with another schema version is not read with this one."""
    from _samples import write_sample

    import toymc.io.ntuple

    monkeypatch.setattr(toymc.io.ntuple, "SCHEMA_VERSION", 2)
    newer = write_sample(CONFIGS / "alp_gg_bksta.toml", tmp_path / "v2.root", events=100)
    monkeypatch.undo()
    with pytest.raises(InputFileError, match="schema version 2 differs"):
        read([demo_files["alp_gg_bksta"], newer])


def test_iterate_checks_before_reading(demo_files, bad_files):
    """iterate() validates every input when called, not at the first chunk."""
    with pytest.raises(InputFileError, match="no column"):
        iterate(demo_files["darkphoton_mumu"], columns=["nope"])
    with pytest.raises(InputFileError, match="not a toymc file"):
        iterate([demo_files["darkphoton_mumu"], bad_files["foreign"]])
