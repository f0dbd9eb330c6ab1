"""The one way every command writes files: checked first, staged, moved into place whole."""

import pytest

from trainopt.errors import InputError
from trainopt.report.output_folder import OutputFolder, safe_name


@pytest.mark.parametrize(("name", "expected"), [
    ("A", "A"), ("P1/north", "P1_north"), ("unit 3 (old)", "unit_3_old_"), ("../up", "_up"),
    ("..", "unnamed"), ("", "unnamed"), ("Kompressor-Süd", "Kompressor-S_d"),
])
def test_safe_name(name, expected):
    assert safe_name(name) == expected


def test_files_appear_only_when_complete(tmp_path):
    target = tmp_path / "a" / "b"
    folder = OutputFolder(target)
    folder.check(["x.txt"])
    assert not target.exists()  # checking creates nothing
    with folder.writing():
        folder.path("x.txt").write_text("one")
        assert not target.exists()  # still in the temporary folder
    assert (target / "x.txt").read_text() == "one"
    assert folder.written == {"x.txt": target / "x.txt"}
    assert [p.name for p in target.iterdir()] == ["x.txt"]


def test_an_error_while_writing_leaves_nothing(tmp_path):
    folder = OutputFolder(tmp_path / "out")

    def write_half():
        with folder.writing():
            folder.path("x.txt").write_text("half")
            raise RuntimeError("the picture failed")

    with pytest.raises(RuntimeError):
        write_half()
    assert list(tmp_path.iterdir()) == []


def test_existing_files_are_refused_unless_overwrite(tmp_path):
    (tmp_path / "x.txt").write_text("mine")
    with pytest.raises(InputError, match="x.txt exists already; pass --force"):
        OutputFolder(tmp_path).check(["x.txt", "y.txt"])
    folder = OutputFolder(tmp_path)
    folder.check(["y.txt"])
    folder.path("x.txt").write_text("new")  # appeared since the check: still refused
    with pytest.raises(InputError, match="x.txt exists already"):
        folder.commit()
    assert (tmp_path / "x.txt").read_text() == "mine"
    with OutputFolder(tmp_path, overwrite=True).writing() as forced:
        forced.path("x.txt").write_text("new")
    assert (tmp_path / "x.txt").read_text() == "new"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["x.txt"]
