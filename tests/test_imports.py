"""Importing the package, its errors and the command group stays light: none of the heavy
libraries (the tool's own design rule), and the command list needs no command imported."""

from __future__ import annotations

import importlib
import subprocess
import sys

import pytest

HEAVY = ("rasterio", "geopandas", "pyogrio", "matplotlib", "scipy", "pyproj", "shapely")


def _loaded_after(code: str) -> list[str]:
    """Heavy and mapsection modules loaded by ``code`` in a fresh interpreter."""
    probe = (f"{code}\nimport sys\n"
             "print(' '.join(m for m in sys.modules if m.split('.')[0] in "
             f"{HEAVY!r} or m.startswith('mapsection.')))")
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         check=True).stdout.split()
    return out


@pytest.mark.parametrize("code", ["import mapsection", "import mapsection.errors",
                                  "import mapsection.caution"])
def test_package_imports_no_heavy_library(code):
    loaded = _loaded_after(code)
    assert not [m for m in loaded if m.split(".")[0] in HEAVY]


def test_group_help_imports_no_command():
    loaded = _loaded_after("from mapsection.cli.main import cli\n"
                           "try:\n    cli(['--help'])\nexcept SystemExit:\n    pass")
    assert not [m for m in loaded if m.split(".")[0] in HEAVY]
    assert not [m for m in loaded if m.startswith(("mapsection.checks", "mapsection.cli."))
                and m != "mapsection.cli.main"]


def test_group_help_sentences_are_the_commands_own():
    from mapsection.cli.main import COMMANDS

    for name, (module, sentence) in COMMANDS.items():
        command = importlib.import_module(f"mapsection.cli.{module}").command
        assert command.name == name
        assert command.help.split("\n\n")[0].split() == sentence.split()


def test_profile_is_the_function_and_lazy():
    import mapsection
    from mapsection.topo_profile import profile

    assert mapsection.profile is profile
    assert "profile" in dir(mapsection)


# The heavy libraries made unimportable: the command's help and the import of the command
# group must not need them (issue 15's start-up rule; the tool's own design rule).
_BLOCK = f"""
import sys
class _Block:
    def find_spec(self, name, path=None, target=None):
        if name.split('.')[0] in {HEAVY!r}:
            raise ImportError('blocked: ' + name)
        return None
sys.meta_path.insert(0, _Block())
"""


@pytest.mark.parametrize("code", [
    "import mapsection.cli.main",
    "from mapsection.cli.main import cli\ntry:\n    cli(['--help'])\nexcept SystemExit as e:\n"
    "    assert e.code in (0, None), e.code",
    "from mapsection.cli.main import cli\ntry:\n    cli(['build', '--help'])\n"
    "except SystemExit as e:\n    assert e.code in (0, None), e.code",
])
def test_start_up_runs_with_the_heavy_libraries_blocked(code):
    run = subprocess.run([sys.executable, "-c", _BLOCK + code], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr[-800:]
