"""The unit registry's import: pint without its dask support (unless dask came first), every
unit of pint still there."""

import importlib.util
import subprocess
import sys

import pytest

import rcsim.units

HAS_DASK = importlib.util.find_spec("dask") is not None


def _fresh(code: str) -> list[str]:
    """Run ``code`` in a new interpreter; the lines it printed (it must succeed)."""
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr
    return done.stdout.split()


@pytest.mark.skipif(not HAS_DASK, reason="dask is not installed: nothing to leave out")
def test_the_registry_leaves_dask_unimported_and_importable():
    out = _fresh(
        "import sys\n"
        "import rcsim.units as u\n"
        "print(u.to_si('2 yd', 'length'))\n"
        "print('dask' in sys.modules)\n"
        "import pint.compat\n"
        "print(pint.compat.HAS_DASK)\n"
        "import dask\n"                      # the entry that blocked it is gone again
        "print(dask.__name__)")
    assert out == ["1.8288", "False", "False", "dask"]   # 1 yd = 0.9144 m (1959 agreement)


@pytest.mark.skipif(not HAS_DASK, reason="dask is not installed")
def test_dask_imported_first_keeps_pints_dask_support():
    out = _fresh(
        "import dask\n"
        "import rcsim.units as u\n"
        "u.to_si('2 yd', 'length')\n"
        "import pint.compat\n"
        "print(pint.compat.HAS_DASK)")
    assert out == ["True"]


# units outside rcsim.units.COMMON_UNITS, through pint's registry, against their exact
# definitions (NIST Special Publication 811, 2008 ed., Appendix B.8 and B.9)
EXACT = [
    ("2 yd", "length", 2 * 0.9144),
    ("1 mile", "length", 1609.344),
    ("1 gallon", "volume", 231 * 0.0254 ** 3),                    # US gallon = 231 in^3
    ("1 psi", "pressure", 0.45359237 * 9.80665 / 0.0254 ** 2),    # lbf/in^2
    ("1 cal/(g*K)", "specific_heat", 4184.0),                     # thermochemical calorie
    ("3 ft^2", "area", 3 * 0.3048 ** 2),
]


@pytest.mark.parametrize("text,kind,expected", EXACT)
def test_units_outside_the_common_list_keep_their_exact_values(text, kind, expected):
    assert rcsim.units.to_si(text, kind) == pytest.approx(expected, rel=1e-14)
