"""A fast start: ``rcsim --help``, every subcommand's ``--help`` and ``import rcsim`` import none
of the heavy libraries, and the public names still arrive when used.

Each check runs in a fresh interpreter (the test process has imported everything already) and
reads ``sys.modules`` from inside it, or ``-X importtime`` for the real entry point. The timings
themselves are in tests/benchmarks/bench_startup.py (no timed unit tests).
"""

import importlib
import importlib.metadata
import os
import subprocess
import sys

import pytest

import rcsim
import rcsim.units
from conftest import SCENARIOS

#: what a start must not import; numpy too: nothing a command's help says needs arrays
HEAVY = ("numpy", "pandas", "scipy", "matplotlib", "h5py", "pint")
COMMANDS = ("check", "steady", "modes", "materials", "run", "plot", "fit", "sweep", "size",
            "report", "draw")
COLD_BOX = os.path.join(SCENARIOS, "cold-box.toml")


def _fresh(code: str) -> str:
    """Run ``code`` in a new interpreter; return what it printed (it must succeed)."""
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr
    return done.stdout


def _imported_after(statements: str, watch=HEAVY) -> set[str]:
    """The packages of ``watch`` that are imported once ``statements`` have run."""
    code = (f"import sys\n{statements}\n"
            f"print('IMPORTED:' + ' '.join(sorted({{m.split('.')[0] for m in sys.modules}} & "
            f"set({tuple(watch)!r}))))")
    last = _fresh(code).strip().splitlines()[-1]
    assert last.startswith("IMPORTED:"), last
    return set(last[len("IMPORTED:"):].split())


def _cli(args) -> str:
    """Statements that run the rcsim command in-process, as click would from a shell."""
    return ("from rcsim.cli import main\n"
            f"code = main({list(args)!r}, prog_name='rcsim', standalone_mode=False)\n"
            "assert code in (0, None), code")


def test_help_imports_nothing_heavy():
    assert _imported_after(_cli(["--help"])) == set()


@pytest.mark.parametrize("command", COMMANDS)
def test_each_command_help_imports_nothing_heavy(command):
    assert _imported_after(_cli([command, "--help"])) == set()


def test_help_through_the_module_entry_point_imports_nothing_heavy():
    # the real start: a new interpreter running ``python -m rcsim --help``, traced by
    # -X importtime (one line per module imported)
    done = subprocess.run([sys.executable, "-X", "importtime", "-m", "rcsim", "--help"],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert done.stdout.startswith("Usage: rcsim [OPTIONS] COMMAND")
    for command in COMMANDS:
        assert f"\n  {command} " in done.stdout
    traced = {line.rsplit("|", 1)[-1].strip().split(".")[0]
              for line in done.stderr.splitlines() if line.startswith("import time:")}
    assert "rcsim" in traced and "click" in traced        # the trace is real
    assert traced.isdisjoint(HEAVY), sorted(traced & set(HEAVY))


def test_python_m_rcsim_cli_also_runs_the_command():
    done = subprocess.run([sys.executable, "-m", "rcsim.cli", "materials", "--category",
                           "metal"], capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    assert "aluminium" in done.stdout


def test_import_rcsim_imports_nothing_heavy():
    assert _imported_after("import rcsim") == set()


def test_plain_numbers_need_no_unit_registry():
    # a number (or a string holding only a number) is already SI: pint is not imported for it
    statements = ("import rcsim.units as u\n"
                  "assert u.to_si(5, 'length') == 5.0\n"
                  "assert u.to_si('20', 'temperature') == 20.0\n"
                  "assert u.to_si_array([1, '2'], 'power').tolist() == [1.0, 2.0]")
    assert "pint" not in _imported_after(statements)


def test_a_run_without_figures_or_files_imports_no_plotting_fitting_or_hdf5():
    # ``rcsim run`` of the shipper loads what simulating needs, not matplotlib (no --plots),
    # h5py (no -o), the fitter or the sweep machinery
    watch = ("matplotlib", "h5py", "rcsim.fitting", "rcsim.sweep", "rcsim.plotting")
    code = (_cli(["run", COLD_BOX, "--quiet"])
            + "\nprint('IMPORTED:' + ' '.join(sorted(m for m in sys.modules if m.split('.')[0] "
              "in ('matplotlib', 'h5py') or m in %r)))" % (watch,))
    last = _fresh("import sys\n" + code).strip().splitlines()[-1]
    assert last == "IMPORTED:", last


# -- the lazy package root -----------------------------------------------------------------

def test_every_public_name_arrives_from_its_module():
    for name in rcsim.__all__:
        assert getattr(rcsim, name) is not None
        assert name in dir(rcsim)
    assert rcsim.Network is importlib.import_module("rcsim.network").Network
    assert rcsim.Result is importlib.import_module("rcsim.results").Result
    assert rcsim.SteadyResult is importlib.import_module("rcsim.steady").SteadyResult
    assert rcsim.load is importlib.import_module("rcsim.scenario").load
    assert rcsim.Sine is importlib.import_module("rcsim.profiles").Sine
    assert rcsim.fit is importlib.import_module("rcsim.fitting").fit
    assert rcsim.errors is importlib.import_module("rcsim.errors")
    assert rcsim.InputError is rcsim.errors.InputError
    with pytest.raises(AttributeError, match="no attribute 'Netwrok'"):
        rcsim.Netwrok  # noqa: B018


def test_star_import_gives_every_public_name():
    namespace = {}
    exec("from rcsim import *", namespace)  # noqa: S102 - the statement under test
    assert set(rcsim.__all__) <= set(namespace)


def test_version_is_the_installed_distribution():
    # the version recorded by the installer (importlib.metadata reads it independently)
    assert rcsim.__version__ == importlib.metadata.version("rcsim")
    out = _fresh("from rcsim.cli import main\nmain(['--version'], prog_name='rcsim', "
                 "standalone_mode=False)")
    assert out.strip() == f"rcsim, version {importlib.metadata.version('rcsim')}"


def test_sweep_stays_the_function_when_its_module_is_imported_first():
    # importing the submodule binds it to the package attribute (import system); rcsim.sweep
    # must still be callable: the sweep function, or a callable sweep package
    out = _fresh("import rcsim\nfrom rcsim.sweep import Normal  # noqa: F401\n"
                 "import rcsim.sweep as imported\n"
                 "print(callable(rcsim.sweep), callable(imported), rcsim.sweep.__name__)")
    is_callable, imported_callable, name = out.split()
    assert is_callable == imported_callable == "True"
    assert name in ("sweep", "rcsim.sweep")


# -- the unit registry ---------------------------------------------------------------------

def test_the_registry_is_built_once_for_every_caller_and_thread():
    out = _fresh(
        "import sys, threading\n"
        "import rcsim.units as u\n"
        "assert 'pint' not in sys.modules\n"
        "seen = []\n"
        "threads = [threading.Thread(target=lambda: seen.append(u.registry())) for _ in range(8)]\n"
        "[t.start() for t in threads]; [t.join() for t in threads]\n"
        "assert len({id(r) for r in seen}) == 1 and u.ureg is seen[0]\n"
        "assert 'ureg' in dir(u)\n"
        "print(u.to_si('50 mm', 'length'), u.to_si('68 degF', 'temperature'))")
    length, temperature = map(float, out.split())
    assert length == 0.05                                  # SI brochure: 1 mm = 1e-3 m
    assert temperature == pytest.approx(20.0, abs=1e-12)   # (68 - 32) * 5/9


def test_the_common_units_need_no_unit_registry():
    # the bundled shipper is written in the units people write most (rcsim.units.COMMON_UNITS):
    # building it and running it imports neither pint nor what pint imports (dask, where
    # installed); a unit outside that list still brings the registry in
    code = (_cli(["run", COLD_BOX, "--quiet"])
            + "\nprint(sorted({'pint', 'dask'} & {m.split('.')[0] for m in sys.modules}))"
            "\nimport rcsim.units as u"
            "\nassert abs(u.to_si('2 yd', 'length') - 1.8288) < 1e-12"
            "\nprint('pint' in sys.modules)")
    before, after = _fresh("import sys\n" + code).strip().splitlines()[-2:]
    assert before == "[]"
    assert after == "True"          # 1 yd = 0.9144 m (international yard, 1959)


@pytest.mark.parametrize("unit,kind", sorted(rcsim.units.COMMON_UNITS))
def test_each_common_unit_agrees_with_the_registry(unit, kind):
    # the table converts without pint; pint (an independent library) converts the same value:
    # for absolute temperatures at two values, so that both factor and offset are checked
    factor, offset = rcsim.units.COMMON_UNITS[(unit, kind)]
    ureg = rcsim.units.registry()
    si = ureg.parse_units(rcsim.units.KINDS[kind][0]) if kind != "temperature_difference" \
        else ureg.kelvin
    spelled = unit.replace("\u00b0C", "degC").replace("\u00b0F", "degF")
    for number in (2.5, 300.0):
        if kind == "temperature_difference" and spelled == "K":
            expected = number     # pint: kelvin to kelvin
        else:
            expected = ureg.Quantity(number, spelled).to(si).magnitude
        assert factor * number + offset == pytest.approx(expected, rel=1e-13, abs=1e-12)
        assert rcsim.units.to_si(f"{number} {unit}", kind) == factor * number + offset


def test_a_quantity_object_is_still_converted():
    # pint quantities handed in by a caller (pint is imported by then)
    q = rcsim.units.ureg.Quantity(68.0, "degF")
    assert rcsim.units.to_si(q, "temperature") == pytest.approx(20.0, abs=1e-12)
    assert rcsim.units.to_si(rcsim.units.ureg.Quantity(50, "mm"), "length") == 0.05
    with pytest.raises(AttributeError):
        rcsim.units.registry_of_nothing  # noqa: B018
