"""Output folders and names: the one writable-folder check, the one file-name sanitiser,
Blender's '//' folders, and the check's report names.

Common practice (no source): a name typed by a user never leaves the folder it is joined
to, and a check that says whether a folder could be written changes nothing on disk.
"""

from __future__ import annotations

import os

import pytest

from turnabout.check.report import report_paths
from turnabout.output import (
    OutputError,
    check_output_folder,
    make_output_folder,
    resolve_blend_relative,
    safe_file_name,
)


@pytest.mark.parametrize(
    "name, want",
    [
        ("Eversion", "Eversion"),
        ("Eversion.001", "Eversion.001"),
        ("a/b\\c:d", "a_b_c_d"),
        ("../../etc", ".._.._etc"),
        ("..", "_"),
        ("", "_"),
        ("sphère-2_x", "sphère-2_x"),  # letters of any script are kept
    ],
)
def test_safe_names_keep_letters_digits_dash_underscore_and_dots(name, want):
    assert safe_file_name(name) == want


@pytest.mark.parametrize("name", ["../x", "..", "/abs", "a\0b", "C:\\x", ".", ""])
def test_a_safe_name_is_one_path_component_inside_its_folder(tmp_path, name):
    joined = tmp_path / safe_file_name(name)
    assert joined.parent == tmp_path and joined.name not in (".", "..")


def test_checking_a_folder_creates_nothing(tmp_path):
    check_output_folder(tmp_path / "new", "out")
    assert not (tmp_path / "new").exists()
    with pytest.raises(OutputError, match="out .*: the folder .* does not exist; create it first"):
        check_output_folder(tmp_path / "missing" / "new", "out")
    assert not (tmp_path / "missing").exists()


def test_making_a_folder_makes_one_level_after_the_check(tmp_path):
    made = make_output_folder(tmp_path / "new", "cache folder")
    assert made.is_dir() and made == (tmp_path / "new").resolve()
    assert make_output_folder(tmp_path / "new", "cache folder") == made  # already there
    with pytest.raises(OutputError, match="^cache folder .*does not exist"):
        make_output_folder(tmp_path / "missing" / "new", "cache folder")
    assert not (tmp_path / "missing").exists()
    (tmp_path / "a_file").write_text("x")
    with pytest.raises(OutputError, match="^report folder .*is an existing file"):
        make_output_folder(tmp_path / "a_file", "report folder")


def test_double_slash_folders_sit_beside_the_saved_blend(tmp_path):
    blend = str(tmp_path / "shots" / "a.blend")
    want = os.path.join(str(tmp_path), "shots", "cache")
    assert resolve_blend_relative("//cache", blend, "cache folder") == want
    assert resolve_blend_relative("//cache/", blend, "cache folder") == want
    assert resolve_blend_relative("//../up", blend, "cache folder") == str(tmp_path / "up")
    assert resolve_blend_relative("", blend, "report folder") == str(tmp_path / "shots")
    assert resolve_blend_relative(str(tmp_path / "abs"), "", "x") == str(tmp_path / "abs")


@pytest.mark.parametrize("folder", ["//", "//reports", ""])
def test_double_slash_in_an_unsaved_file_is_refused_naming_the_option(folder):
    with pytest.raises(OutputError, match="^report folder: .*not saved yet"):
        resolve_blend_relative(folder, "", "report folder")


def test_report_names_carry_the_blend_and_the_object(tmp_path):
    folder = str(tmp_path)
    j, p = report_paths(folder, "Eversion", os.path.join("x", "shot 1.blend"))
    assert j == os.path.join(folder, "shot 1_Eversion_check.json")
    assert p == os.path.join(folder, "shot 1_Eversion_check.png")
    assert report_paths(folder, "Cube")[0] == os.path.join(folder, "untitled_Cube_check.json")
    assert report_paths(folder, "Cube", "a.blend", stem="demo")[0].endswith("demo_Cube_check.json")
    j, _ = report_paths(folder, "../../evil")
    assert os.path.dirname(j) == folder
