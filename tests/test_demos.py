"""Bundled demo systems as real files: from the source tree, and from package data that is not on disk.

The wheel install itself is exercised by ``.ci/wheel`` (README Python API block and ``archsys report`` from
an installed wheel in an empty folder); these tests check the pieces without building one.
"""
import pathlib
import zipfile

import pytest

import archsys
from archsys import demos


def test_every_demo_system_is_a_readable_file():
    files = demos.demo_files()
    assert [pathlib.Path(f).stem for f in files] == ["korrin", "ondrel", "perrow", "velmora"]
    for f in files:
        assert pathlib.Path(archsys.demo_path(pathlib.Path(f).stem.upper())) == pathlib.Path(f)
        archsys.read_system(f)


def test_unknown_demo_names_the_demo_systems():
    with pytest.raises(FileNotFoundError, match="korrin, ondrel, perrow, velmora"):
        archsys.demo_path("nowhere")


def test_package_data_inside_a_zip_becomes_a_real_file(tmp_path):
    # a zipped install gives Traversables that are not paths (common practice: importlib.resources.as_file)
    archive = tmp_path / "pkg.zip"
    with zipfile.ZipFile(archive, "w") as zf:
        zf.writestr("archsys/data/demo_systems/tiny.toml", "name = 'tiny'\n")
    entry = zipfile.Path(archive, "archsys/data/demo_systems/tiny.toml")
    real = pathlib.Path(demos._real(entry))
    assert real.is_file() and real.read_text() == "name = 'tiny'\n"
