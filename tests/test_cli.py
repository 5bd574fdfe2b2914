"""The rcsim command through click's CliRunner: outputs, exit codes, files."""

import os

import h5py
import pytest

from conftest import SCENARIOS

COLD_BOX = os.path.join(SCENARIOS, "cold-box.toml")


def test_check(cli):
    r = cli("check", COLD_BOX)
    assert r.exit_code == 0, r.output
    assert "cold-box.toml: ok" in r.output
    assert "foam" in r.output and "R = " in r.output


def test_steady_and_between(cli):
    r = cli("steady", COLD_BOX, "--between", "payload", "bay")
    assert r.exit_code == 0, r.output
    assert "equivalent resistance payload - bay" in r.output
    bad = cli("steady", COLD_BOX, "--between", "payload", "nowhere")
    assert bad.exit_code == 2
    assert bad.output.startswith("error: ")


def test_modes(cli):
    r = cli("modes", COLD_BOX)
    assert r.exit_code == 0, r.output
    assert "payload" in r.output and "mode" in r.output


def test_materials(cli):
    r = cli("materials", "--sources")
    assert r.exit_code == 0
    assert "polyurethane-foam" in r.output and "source:" in r.output
    r = cli("materials", "--category", "insulaton")
    assert r.exit_code == 2
    assert "did you mean 'insulation'" in r.output


def test_run_writes_files(cli, tmp_path):
    out = tmp_path / "r.h5"
    csv = tmp_path / "r.csv"
    r = cli("run", COLD_BOX, "-o", out, "--csv", csv)
    assert r.exit_code == 0, r.output
    assert "hold time" in r.output
    assert "energy" in r.output and "balance error" in r.output
    assert "caution" in r.output
    with h5py.File(out, "r") as h5:
        assert h5.attrs["scenario"] == open(COLD_BOX, encoding="utf-8").read()
    assert csv.exists()


def test_run_refuses_bad_output_paths_before_work(cli, tmp_path):
    r = cli("run", COLD_BOX, "-o", tmp_path / "nofolder" / "x.h5")
    assert r.exit_code == 2
    assert "does not exist" in r.output
    r = cli("run", COLD_BOX, "-o", tmp_path / "x.txt")
    assert r.exit_code == 2
    assert ".h5" in r.output


@pytest.mark.parametrize("cmd", ["run", "check", "steady", "modes"])
def test_missing_file(cli, tmp_path, cmd):
    r = cli(cmd, tmp_path / "none.toml")
    assert r.exit_code == 2
    assert "file not found" in r.output
    assert "Traceback" not in r.output


def test_warning_is_relayed(cli, tmp_path):
    text = open(COLD_BOX).read().replace(
        '{ conduction = { material = "polyurethane-foam", thickness = "50 mm", area = "1.05 m^2" } },',
        '{ conduction = { material = "concrete-medium", thickness = "150 mm", area = "1.05 m^2", slices = 1 } },')
    assert text != open(COLD_BOX).read()
    p = tmp_path / "b.toml"
    p.write_text(text)
    r = cli("check", p)
    assert r.exit_code == 0
    assert "warning:" in r.output and "Biot" in r.output
