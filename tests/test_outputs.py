"""Outputs are all-or-nothing and never overwrite an input."""

import pytest

from fitz_tool.exceptions import OutputError
from fitz_tool.outputs.atomic import write_outputs


def test_outputs_land_in_new_folders(tmp_path):
    written = write_outputs({tmp_path / "a" / "b" / "x.txt": "hello", tmp_path / "y.bin": b"\x00\x01"})
    assert (tmp_path / "a" / "b" / "x.txt").read_text() == "hello"
    assert (tmp_path / "y.bin").read_bytes() == b"\x00\x01"
    assert written == [tmp_path / "a" / "b" / "x.txt", tmp_path / "y.bin"]
    # readable by others like any file the user writes (not the 0600 of a temporary file)
    assert (tmp_path / "y.bin").stat().st_mode & 0o044 == 0o044


def test_an_input_is_never_overwritten_and_nothing_is_written(tmp_path):
    source = tmp_path / "bench.csv"
    source.write_text("original")
    with pytest.raises(OutputError, match="overwrite an input"):
        write_outputs({tmp_path / "other.txt": "x", source: "clobber"}, inputs=[str(source)])
    assert source.read_text() == "original"
    assert not (tmp_path / "other.txt").exists()


def test_a_failed_write_leaves_no_partial_files(tmp_path):
    blocker = tmp_path / "file_not_folder"
    blocker.write_text("")
    with pytest.raises(OutputError):
        write_outputs({tmp_path / "good.txt": "x", blocker / "sub" / "bad.txt": "y"})
    assert not (tmp_path / "good.txt").exists()
    assert [p.name for p in tmp_path.iterdir()] == ["file_not_folder"]
