"""One output layer: targets checked before any work, all files or none, one file mode, one-line errors.

Nothing here relies on permissions (CI may run as root): unusable targets are folders, files used as
folders, device files, pipes, over-long names and failures injected into a writer.
"""

from __future__ import annotations

import errno
import os
import stat

import pytest

from hostile import PROBLEM, run, snapshot


PURE = ["thermo", "saturation", "--fluid", "propane", "--eos", "pr", "--quiet"]
MIXTURE_CRITICAL = ["thermo", "critical", "--mixture", "methane=0.7,ethane=0.3", "--eos", "pr"]



@pytest.fixture
def problem(tmp_path):
    path = tmp_path / "hinge.toml"
    path.write_text(PROBLEM)
    return path



def refused(capsys, tmp_path, words, message):
    before = snapshot(tmp_path)
    code, out, err = run(capsys, *words)
    assert code == 2, (out, err)
    assert err.count("\n") == 1 and "Traceback" not in err
    assert message in err
    assert snapshot(tmp_path) == before
    return err


@pytest.mark.parametrize("option", ["--record", "--plot"])
def test_a_folder_as_an_output_file_is_refused_before_any_work(tmp_path, capsys, problem, option):
    (tmp_path / "adir.png").mkdir()
    refused(capsys, tmp_path, ["run", str(problem), "--quiet", option, str(tmp_path / "adir.png")],
            f"{option} {str(tmp_path / 'adir.png')!r} is a folder; give a file name")


def test_empty_long_and_impossible_names_are_refused(tmp_path, capsys, problem):
    base = ["run", str(problem), "--quiet"]
    refused(capsys, tmp_path, [*base, "--record", ""], "--record: the file name is empty")
    refused(capsys, tmp_path, [*base, "--record", str(tmp_path / ("r" * 256 + ".json"))], "is longer than 255 bytes")
    (tmp_path / "afile").write_text("x")
    refused(capsys, tmp_path, [*base, "--record", str(tmp_path / "afile" / "r.json")], "is a file, not a folder")
    refused(capsys, tmp_path, [*base, "--out", str(tmp_path / "afile")], "exists and is not a folder")
    refused(capsys, tmp_path, [*base, "--out", str(tmp_path / "afile" / "o")], "is a file, not a folder")
    refused(capsys, tmp_path, [*base, "--record", str(tmp_path / "missing" / "r.json")], "does not exist")
    refused(capsys, tmp_path, [*base, "--record", os.devnull], "is not a regular file (a device, pipe or socket)")
    os.mkfifo(tmp_path / "pipe.json")
    refused(capsys, tmp_path, [*base, "--record", str(tmp_path / "pipe.json")], "is not a regular file")
    refused(capsys, tmp_path, [*base, "--record", str(tmp_path / "same.png"), "--plot", str(tmp_path / "same.png")],
            "--plot and --record name the same file")


def test_a_link_to_a_regular_file_is_written_through_and_stays_a_link(tmp_path, capsys, problem):
    (tmp_path / "real.json").write_text("old")
    (tmp_path / "link.json").symlink_to(tmp_path / "real.json")
    code, _, err = run(capsys, "run", str(problem), "--quiet", "--record", str(tmp_path / "link.json"))
    assert code == 0, err
    assert (tmp_path / "link.json").is_symlink()
    assert '"record": "contin run record"' in (tmp_path / "real.json").read_text()
    os.symlink(os.devnull, tmp_path / "null.json")
    refused(capsys, tmp_path, ["run", str(problem), "--record", str(tmp_path / "null.json")], "is not a regular file")


def test_a_write_that_fails_late_leaves_nothing_of_the_run(tmp_path, capsys, problem, monkeypatch):
    import contin.base._plot

    def full_disk(figure, path, argument="--plot"):
        raise OSError(errno.ENOSPC, "No space left on device", str(path))

    monkeypatch.setattr(contin.base._plot, "save_figure", full_disk)
    err = refused(capsys, tmp_path, ["run", str(problem), "--quiet", "--out", str(tmp_path / "o" / "deeper"),
                                     "--record", str(tmp_path / "r.json"), "--plot", str(tmp_path / "p.png")],
                  "--plot: cannot write the file: No space left on device")
    assert ".contin-" in err  # the temporary name, which is gone again (snapshot unchanged)


def test_a_rename_that_fails_late_restores_the_earlier_targets(tmp_path, capsys, problem, monkeypatch):
    (tmp_path / "r.json").write_text("the old record")
    real = os.replace
    calls = []

    def failing_second(source, target):
        calls.append(target)
        if str(target).endswith("p.png"):  # the last of the three renames
            raise OSError(errno.EIO, "Input/output error", str(target))
        return real(source, target)

    monkeypatch.setattr(os, "replace", failing_second)
    refused_words = ["run", str(problem), "--quiet", "--out", str(tmp_path / "o"), "--record", str(tmp_path / "r.json"),
                     "--plot", str(tmp_path / "p.png")]
    code, _, err = run(capsys, *refused_words)
    monkeypatch.setattr(os, "replace", real)
    assert code == 2 and err.count("\n") == 1 and "--plot: cannot write the file: Input/output error" in err
    assert any(str(target).endswith("hinge.csv") for target in calls)  # earlier renames did happen ...
    assert (tmp_path / "r.json").read_text() == "the old record"  # ... and were undone
    assert snapshot(tmp_path) == ["hinge.toml", "r.json"]


@pytest.mark.parametrize("mask", [0o022, 0o077])
def test_every_output_gets_the_same_mode_from_the_umask(tmp_path, capsys, problem, mask):
    old = os.umask(mask)
    try:
        code, _, err = run(capsys, "run", str(problem), "--quiet", "--out", str(tmp_path / "o"),
                           "--record", str(tmp_path / "r.json"), "--plot", str(tmp_path / "p.png"))
    finally:
        os.umask(old)
    assert code == 0, err
    files = [tmp_path / "o" / "hinge.csv", tmp_path / "o" / "hinge.json", tmp_path / "r.json", tmp_path / "p.png"]
    assert {stat.S_IMODE(f.stat().st_mode) for f in files} == {0o666 & ~mask}


def test_a_path_in_the_process_filesystem_is_one_line(tmp_path, capsys, problem):
    if not os.path.isdir("/proc/self"):
        pytest.skip("no process filesystem here")
    code, _, err = run(capsys, "run", str(problem), "--quiet", "--record", "/proc/self/contin-record.json")
    assert code == 2 and err.count("\n") == 1 and "--record" in err and "Traceback" not in err


def test_thermo_outputs_share_the_same_checks(tmp_path, capsys):
    refused(capsys, tmp_path, [*PURE, "--csv", ""], "--csv: the file name is empty")
    refused(capsys, tmp_path, [*PURE, "--csv", str(tmp_path)], "is a folder; give a file name")
    refused(capsys, tmp_path, [*PURE, "--csv", str(tmp_path / "a.csv"), "--record", str(tmp_path / "a.csv")],
            "--csv and --record name the same file")
    refused(capsys, tmp_path, [*MIXTURE_CRITICAL, "--plot", str(tmp_path / "c.png")],
            "a mixture critical point is one point: drop --plot")


def test_thermo_critical_mixture_csv_follows_units(tmp_path, capsys):
    code, _, err = run(capsys, *MIXTURE_CRITICAL, "--csv", str(tmp_path / "c.csv"), "--units", "degC-bar")
    assert code == 0, err
    text = (tmp_path / "c.csv").read_text()
    assert "T [degC], P [bar]" in text
    row = [line for line in text.splitlines() if line and not line.startswith(("#", "T,"))][0]
    assert -150.0 < float(row.split(",")[0]) < 50.0  # a temperature in degC, not K (about 200-300 K)
