"""No output destroys data (explorer/outputs/writing.py and the commands that write files): outputs are
checked before any computation, never replace an input, a link or an existing file unless asked, and are
written atomically."""
from __future__ import annotations

import os

import pytest

from porefill.explorer.cli.main import main
from porefill.explorer.outputs.writing import OutputRefused, check_output, write_atomic

FAST = ["isotherm", "--pore", "slit", "--size", "8", "--wall", "6", "--temperature", "1.5",
        "--site-model", "classical", "--points", "20"]


def test_an_existing_file_is_kept_unless_force(tmp_path, capsys):
    out = tmp_path / "iso.csv"
    out.write_text("lab notes\n")
    assert main([*FAST, "--csv", str(out)]) == 2
    assert "exists: add --force" in capsys.readouterr().err and out.read_text() == "lab notes\n"
    assert main([*FAST, "--csv", str(out), "--force"]) == 0
    assert out.read_text().startswith("# porefill isotherm:") and "\nmu_K," in out.read_text()


def test_an_input_is_never_an_output(tmp_path, capsys):
    scenario = tmp_path / "s.toml"
    scenario.write_text('[scenario]\nshape = "slit"\nsize_angstrom = 8.0\nwall_angstrom = 6.0\n')
    before = scenario.read_bytes()
    assert main(["report", str(scenario), "--out", str(scenario), "--force", "--quiet"]) == 2
    assert "is one of the inputs" in capsys.readouterr().err and scenario.read_bytes() == before
    data = tmp_path / "d.csv"
    data.write_text("p/p0,n (mmol/g)\n0.1,1\n0.2,2\n")
    assert main(["fit", str(data), "--adsorbate", "nitrogen", "--temperature", "77.35", "--csv", str(data),
                 "--force"]) == 2
    assert "is one of the inputs" in capsys.readouterr().err and data.read_text().startswith("p/p0")


def test_a_link_or_a_missing_folder_is_refused_before_computing(tmp_path, capsys):
    target = tmp_path / "real.csv"
    target.write_text("keep\n")
    link = tmp_path / "link.csv"
    os.symlink(target, link)
    assert main([*FAST, "--csv", str(link), "--force"]) == 2
    assert "symbolic link" in capsys.readouterr().err and target.read_text() == "keep\n"
    assert main([*FAST, "--csv", str(tmp_path / "nowhere" / "x.csv")]) == 2
    assert "no folder" in capsys.readouterr().err


def test_a_write_cut_short_leaves_the_old_file_whole(tmp_path, monkeypatch):
    out = tmp_path / "out.csv"
    out.write_text("the good one\n")

    def disk_full(fd):                       # the data did not reach the disk, as with a full disk
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "fsync", disk_full)
    with pytest.raises(OSError):
        write_atomic(out, "x" * 10_000)
    assert out.read_text() == "the good one\n"
    assert [p.name for p in tmp_path.iterdir()] == ["out.csv"]     # no temporary file left behind
    monkeypatch.undo()
    write_atomic(out, "new\n")
    assert out.read_text() == "new\n"


def test_refusals_name_the_option_and_the_place(tmp_path):
    with pytest.raises(OutputRefused, match="--out needs a file name"):
        check_output(" ", option="--out")
    with pytest.raises(OutputRefused, match="is a folder"):
        check_output(str(tmp_path), option="--out")
    existing = tmp_path / "a.html"
    existing.write_text("x")
    assert check_output(str(existing), option="--out", ask=lambda q: True) == existing   # a yes on a terminal
