"""``rcsim identify`` and the ``[fit]`` section through click's CliRunner: exit codes, the path
printed, the files written, one-line errors.

The numbers printed and written are checked against the Python API (:func:`rcsim.identify`,
:func:`rcsim.fit`) run in the same test on the same file; the API itself is checked against
synthetic truth in tests/test_identify.py and tests/test_fit_compare.py. The log is the two-node
truth of tests/test_identify.py (scipy.signal.lsim on an invented body behind a massive
envelope), so the structure selected is also checked against the one that made the log.
"""

import os
import warnings

import pandas as pd
import pytest

import rcsim
from rcsim.errors import InputError
from rcsim.fitting import FitWarning

from conftest import SCENARIOS
from test_identify import truth_log

BLOCK = os.path.join(SCENARIOS, "fit-block.toml")
BLOCK_LOG = os.path.join(SCENARIOS, "fit-block-log.csv")
FREE = ["nodes.block.capacity", "links.skin.resistance", "nodes.block.initial"]
ARGS = ["--measured", "indoor", "--driver", "heater [W]", "--ambient", "outdoor"]


def quiet(fn, *args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FitWarning)
        return fn(*args, **kwargs)


def one_error_line(r, expected):
    """Exit 2, one line 'error: ...' holding ``expected``, no traceback."""
    assert r.exit_code == 2, r.output
    errors = [ln for ln in r.output.splitlines() if ln.startswith("error:")]
    assert len(errors) == 1 and expected in errors[0], r.output
    assert "Traceback" not in r.output


@pytest.fixture
def two_node_csv(tmp_path):
    path = tmp_path / "box-log.csv"
    truth_log(2, seed=0).to_csv(path, index=False)
    return str(path)


@pytest.mark.slow
def test_identify_prints_the_path_and_writes_its_files(cli, tmp_path, two_node_csv):
    steps, chosen, plots, page = (tmp_path / "steps.csv", tmp_path / "chosen.toml",
                                  tmp_path / "figs", tmp_path / "identify.html")
    r = cli("identify", two_node_csv, *ARGS, "--max-nodes", "3", "--extension", "envelope",
            "--extension", "mass", "--holdout", "0.2", "-o", steps, "--write-scenario", chosen,
            "--plots", plots, "--report", page)
    assert r.exit_code == 0, r.output
    api = quiet(rcsim.identify, two_node_csv, measured=["indoor"], drivers=["heater [W]"],
                ambient="outdoor", max_nodes=3, moves=("envelope", "mass"), holdout=0.2)
    out = r.output
    assert "Bacher & Madsen" in out and "caution:" in out
    # one line per structure tried, in the API's order, with its numbers
    table = pd.read_csv(steps)
    assert list(table["structure"]) == list(api.steps["structure"])
    for col in ("log_likelihood", "aic", "bic", "p_value", "rmse_holdout", "whiteness_p"):
        pd.testing.assert_series_equal(table[col], api.steps[col].astype(float),
                                       check_names=False, rtol=1e-9)
    for _, row in api.steps.iterrows():
        line = next(ln for ln in out.splitlines() if f" {row['structure']} " in f"{ln} ")
        assert f"{row['log_likelihood']:.6g}" in line and f"{row['bic']:.6g}" in line
    # the truth has two nodes: the search keeps the envelope and stops
    assert api.fit.label == "2 nodes: envelope"
    assert f"selected {api.fit.label}:" in out
    assert table.loc[table["selected"], "structure"].tolist() == [api.fit.label]
    # the selected scenario: read back, its values those of the API's fit
    back = rcsim.load(chosen)
    for key in api.free:
        assert back.si_value(key) == pytest.approx(api.fit.estimates.loc[key, "value"],
                                                   rel=1e-9)
        assert key in out
    assert sorted(os.listdir(plots)) == ["box-log-fit.png", "box-log-structures.png"]
    text = page.read_text(encoding="utf-8")
    assert "Structures tried" in text and api.fit.label in text
    assert f"wrote {page}" in out
    assert not [p for p in os.listdir(tmp_path) if p.startswith(".") or p.endswith(".tmp")]


@pytest.mark.parametrize("args, expected", [
    (["--measured", "inside", "--driver", "heater [W]", "--ambient", "outdoor"],
     "has no column 'inside'"),
    (["--measured", "indoor", "--driver", "heater [W]", "--ambient", "nowhere"],
     "ambient 'nowhere' is neither a temperature, a log column nor 'free'"),
    (["--measured", "indoor", "--ambient", "20 kg"], "is neither a temperature"),
    ([*ARGS, "--holdout", "2"], "holdout"),
    ([*ARGS, "-o", "steps.txt"], "should end with .csv"),
    ([*ARGS, "--report", "page.pdf"], "should end with .html"),
])
def test_identify_bad_input_is_one_line_exit_2(cli, tmp_path, two_node_csv, args, expected):
    before = set(os.listdir(tmp_path))
    r = cli("identify", two_node_csv, *[str(tmp_path / a) if a.endswith((".txt", ".pdf"))
                                        else a for a in args])
    one_error_line(r, expected)
    assert set(os.listdir(tmp_path)) == before       # nothing written


def test_identify_unknown_column_suggests_the_nearest(cli, two_node_csv):
    r = cli("identify", two_node_csv, "--measured", "indor", "--ambient", "outdoor")
    one_error_line(r, "has no column 'indor'")
    assert "did you mean 'indoor'" in r.output


def test_identify_needs_a_measured_column(cli, two_node_csv):
    r = cli("identify", two_node_csv)
    assert r.exit_code == 2 and "--measured" in r.output


# -- the [fit] section: a candidate is one file ----------------------------------------------
def block_with_section(write, section: str) -> str:
    with open(BLOCK, encoding="utf-8") as fh:
        return write("block.toml", fh.read() + "\n" + section)


def test_fit_uses_the_fit_section_when_nothing_is_freed(cli, write, tmp_path):
    path = block_with_section(write, "[fit]\nfree = " + str(FREE).replace("'", '"') + "\n"
                              "bounds = { \"nodes.block.capacity\" = [\"0.5 kJ/K\", "
                              "\"5 kJ/K\"] }\n")
    est = tmp_path / "est.csv"
    r = cli("fit", path, BLOCK_LOG, "--starts", "2", "-o", est, "--max-gap", "1 h")
    assert r.exit_code == 0, r.output
    # the scenario reader takes the section; rcsim.fit of the loaded scenario frees its keys
    api = quiet(rcsim.fit, rcsim.load(path), BLOCK_LOG, starts=2, max_gap="1 h")
    table = pd.read_csv(est, index_col="key")
    assert list(table.index) == FREE == list(api.estimates.index)
    for key in FREE:
        assert table.loc[key, "value"] == pytest.approx(api.estimates.loc[key, "value"],
                                                        rel=1e-9)
        assert key in r.output
    # the generating value of the log (scenarios/make-fit-block-log.py) inside the interval
    assert table.loc["nodes.block.capacity", "ci_low"] <= 1794.0 <= \
        table.loc["nodes.block.capacity", "ci_high"]


def test_a_fit_section_key_typo_is_one_line(cli, write, tmp_path):
    path = block_with_section(write, "[fit]\nfre = [\"nodes.block.capacity\"]\n")
    for args in (["fit", path, BLOCK_LOG, "-o", tmp_path / "est.csv"], ["check", path]):
        r = cli(*args)
        one_error_line(r, "block.toml: fit: unknown key 'fre'")
        assert "did you mean 'free'" in r.output
    assert not (tmp_path / "est.csv").exists()
    with pytest.raises(InputError, match="unknown key 'fre'"):
        rcsim.load(path)


def test_a_scenario_without_free_values_is_refused(cli):
    r = cli("fit", BLOCK, BLOCK_LOG)
    one_error_line(r, "fit-block.toml: nothing to fit")
    assert "[fit] section" in r.output


@pytest.mark.slow
def test_identify_with_process_noise(cli):
    # the invented two-node case record of the README (scenarios/make-identify-log.py)
    log = os.path.join(SCENARIOS, "identify-case-log.csv")
    args = ["--measured", "inside", "--driver", "heater [W]", "--ambient", "room",
            "--max-nodes", "2", "--extension", "envelope"]
    r = cli("identify", log, *args, "--noise", "process")
    assert r.exit_code == 0, r.output
    api = quiet(rcsim.identify, log, measured="inside", drivers=["heater [W]"], ambient="room",
                max_nodes=2, moves=("envelope",), noise="process")
    assert api.fit.noise == "process" and api.fit.n_states == 2
    for _, row in api.steps.iterrows():
        line = next(ln for ln in r.output.splitlines() if f" {row['structure']} " in f"{ln} ")
        assert f"{row['log_likelihood']:.6g}" in line
    noise = api.fit.noise_estimates
    assert f"process.inside {noise.loc['process.inside', 'value']:.4g} K/s^0.5" in r.output
    assert "with process noise (Kalman filter)" in r.output
