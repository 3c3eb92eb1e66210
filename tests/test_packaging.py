"""The package list of pyproject.toml: every folder that ships files is a package.

setuptools prints a forty-line warning on ``pip install .`` for a folder inside a
package that holds files but is not listed in ``packages`` (the vehicle and motor
tables of ``cardgen/profiles/data`` were such a folder). ``tests/test_install.py``
checks what the installed wheel holds; this checks the declaration, without a build.
"""

import tomllib
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def _config() -> dict:
    return tomllib.loads((REPO / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]


def _folders_with_files() -> set[str]:
    """Every folder under cardgen/ (and the folders shipped under other names) that
    holds a file, as the dotted package name it installs under."""
    config = _config()
    roots = {"cardgen": REPO / "cardgen"}
    roots |= {name: REPO / folder for name, folder in config["package-dir"].items()}
    found = set()
    for name, root in roots.items():
        for folder in [root, *(p for p in root.rglob("*") if p.is_dir())]:
            if folder.name == "__pycache__" or not any(f.is_file() for f in folder.iterdir()):
                continue
            rel = folder.relative_to(root).parts
            found.add(".".join((name, *rel)))
    return found


def test_every_folder_that_ships_files_is_a_declared_package():
    declared = set(_config()["packages"])
    missing = _folders_with_files() - declared
    assert not missing, f"folders with files missing from [tool.setuptools] packages: {sorted(missing)}"


def test_every_package_data_pattern_names_a_declared_package():
    config = _config()
    assert set(config["package-data"]) <= set(config["packages"])
