"""Files the workbench writes: provenance on every file, read by show and plot; labelled dimensions; umask.

References: the Hermite coefficients of e^{-n x^2/2}, a_k^{(n)} = sqrt(k/n), b_k = 0 (DLMF 18.9.1
rescaled); the zeros of the generalised Laguerre polynomial L_K^{(0.7)} from
scipy.special.roots_genlaguerre, divided by n for the weight x^0.7 e^{-nx}; HDF5 dimension scales
as the netCDF-4 format uses them (h5py's dims API; xarray's h5netcdf engine when installed).
"""

from __future__ import annotations

import os

import h5py
import numpy as np
import pytest
from scipy.special import roots_genlaguerre

from workbench.case import parse_case
from workbench.cli import main
from workbench.pipeline import run_case

PROVENANCE = ("format", "format_version", "workbench_version", "created_utc", "parameters", "library_versions",
              "timings_s", "platform", "command", "conventions")


@pytest.fixture
def umask_027():
    old = os.umask(0o027)
    try:
        yield
    finally:
        os.umask(old)


@pytest.mark.parametrize("argv, kind", [
    (["equilibrium", "--potential", "x**2/2"], "equilibrium"),
    (["recurrence", "--potential", "x**2/2", "--n", "30", "--count", "40"], "recurrence"),
    (["zeros", "--potential", "x", "--on=0:", "--factor", "x^0.7", "--n", "40"], "zeros"),
], ids=["equilibrium", "recurrence", "zeros"])
def test_command_files_carry_provenance_and_are_read(tmp_path, capsys, umask_027, argv, kind):
    path = tmp_path / f"{kind}.h5"
    assert main(argv + ["--out", str(path)]) == 0
    # created with the user's umask (027 -> 0640), not the 0600 of a private temporary file
    assert path.stat().st_mode & 0o777 == 0o640
    with h5py.File(path, "r") as f:
        assert all(key in f.attrs for key in PROVENANCE)
        assert f.attrs["format"] == f"workbench-{kind}"
        if kind == "recurrence":
            k = f["recurrence/k"][()]
            np.testing.assert_allclose(f["recurrence/a"][()], np.sqrt(k / 30), rtol=1e-13, atol=1e-15)
            assert f["recurrence/a"].dims[0][0].name == "/recurrence/k"
        if kind == "zeros":
            expected = roots_genlaguerre(40, 0.7)[0] / 40
            np.testing.assert_allclose(f["zeros/zeros"][()], expected, rtol=1e-12)
            assert f["zeros/zeros"].dims[0][0].name == "/zeros/j"
        if kind == "equilibrium":
            assert f["equilibrium/density"].dims[0][0].name == "/equilibrium/x"
    capsys.readouterr()
    assert main(["show", str(path)]) == 0
    out = capsys.readouterr().out
    assert f"workbench-{kind} written by 'workbench {kind}" in out
    assert main(["plot", str(path), "--out", str(tmp_path / "figures"), "--formats", "png", "--dpi", "60"]) == 0
    figure = {"equilibrium": "density", "recurrence": "recurrence", "zeros": "zeros"}[kind]
    assert (tmp_path / "figures" / f"{figure}.png").stat().st_mode & 0o777 == 0o640


def test_run_file_has_labelled_dimensions(tmp_path, case_text, umask_027):
    case = parse_case(case_text(n=(10, 12), comparisons=["contour_points = 16"]), source="gauss.toml")
    outcome = run_case(case, tmp_path / "out", progress=False, draw=False)
    assert outcome.path.stat().st_mode & 0o777 == 0o640
    assert (tmp_path / "out" / "partial" / "n_00010.h5").stat().st_mode & 0o777 == 0o640
    with h5py.File(outcome.path, "r") as f:
        def labels(name):
            return [axis[0].name if len(axis) else None for axis in f[name].dims]

        assert f["comparison/n"].is_scale and f["model/n"].is_scale
        for name in ("err_a", "a_direct", "log_hankel_direct", "small_norm"):
            assert labels(f"comparison/{name}") == ["/comparison/n"]
        assert labels("comparison/band_counts_direct") == ["/comparison/n", "/comparison/band_counts_direct_index1"]
        assert labels("model/values_shape") == ["/model/n", "/model/value_x"]
        assert labels("model/a_dense") == ["/model/n_dense"]
        # two circles and two n: the radii are no function of n
        assert labels("model/contour_radii") == ["/model/contour_radii_index0"]
        assert labels("equilibrium/density") == ["/equilibrium/x"]
        assert labels("direct/n_00012/values") == ["/direct/n_00012/value_x"]
    # the tree read back carries no HDF5 bookkeeping and writes again (a resume rewrites partials)
    from workbench.results import read_run, write_run

    tree = read_run(outcome.path)
    assert "DIMENSION_LIST" not in tree.groups["comparison"].datasets["err_a"].attrs
    write_run(tmp_path / "again.h5", tree)
    with h5py.File(tmp_path / "again.h5", "r") as f:
        assert f["comparison/err_a"].dims[0][0].name == "/comparison/n"


def test_xarray_sees_the_n_coordinate(tmp_path, case_text):
    xarray = pytest.importorskip("xarray")
    pytest.importorskip("h5netcdf")
    case = parse_case(case_text(n=(10, 12), comparisons=["contour_points = 16"]), source="gauss.toml")
    outcome = run_case(case, tmp_path / "out", progress=False, draw=False)
    data = xarray.open_dataset(outcome.path, group="comparison", engine="h5netcdf")
    assert "n" in data.coords and data["err_a"].dims == ("n",)
    np.testing.assert_array_equal(data["n"].values, [10, 12])
    assert data["band_counts_direct"].dims == ("n", "band_counts_direct_index1")
    # every group opens, with its coordinates
    for group, coordinate in (("model", "n"), ("model/log_hankel_terms", "n"), ("equilibrium", "x"),
                              ("direct/n_00010", "value_x")):
        assert coordinate in xarray.open_dataset(outcome.path, group=group, engine="h5netcdf").coords
