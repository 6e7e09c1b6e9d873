"""Output paths: only regular files (or ``-``), checked before any work, modes as the umask and
the replaced file say, atomic replacement, never an input of the run.

Sources: the file-type tests (``S_ISREG``, ``S_ISFIFO``, ``S_ISDIR``) and the creation mode
``0666 & ~umask`` of a new file are POSIX (IEEE Std 1003.1, ``<sys/stat.h>`` and ``open()``,
"the file permission bits ... shall be set to the value of mode ... modified by the file mode
creation mask"); keeping a replaced file's mode is common practice for editors that replace
atomically. No real device is ever written: FIFOs and symlinks under ``tmp_path`` stand in.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest
from helpers import EXAMPLES, run_cli

from optimizer.safewrite import OutputError, check_outputs, write_all, write_text

MOTOR = str(EXAMPLES / "motor_shunt.yaml")
CHECK = ["check", MOTOR, "--r1", "1k", "--r2", "20k", "--r3", "1k", "--r4", "20k"]
CHECK += ["--tolerance", "0.1%", "--tempco", "25ppm/K", "--samples", "500"]


def _run(argv: list[str]) -> tuple[int, str, str]:
    return run_cli(argv)


def _special(tmp_path: Path, kind: str) -> Path:
    """A FIFO, a folder, or a symlink to either, under ``tmp_path``."""
    fifo = tmp_path / "pipe"
    folder = tmp_path / "folder"
    if kind in ("fifo", "link-to-fifo"):
        os.mkfifo(fifo)
    else:
        folder.mkdir()
    if kind.startswith("link"):
        link = tmp_path / "link.csv"
        link.symlink_to(fifo if kind == "link-to-fifo" else folder)
        return link
    return fifo if kind == "fifo" else folder


@pytest.mark.parametrize(
    ("kind", "words"),
    [
        ("fifo", "is a FIFO (named pipe), not a regular file"),
        ("folder", "is a folder, not a regular file"),
        ("link-to-fifo", "is a symlink to a FIFO (named pipe), not a regular file"),
        ("link-to-folder", "is a symlink to a folder, not a regular file"),
    ],
)
@pytest.mark.parametrize("force", [False, True])
def test_only_regular_files_are_written_force_or_not(
    tmp_path: Path, kind: str, words: str, force: bool
) -> None:
    target = _special(tmp_path, kind)
    before = target.lstat()
    code, out, err = _run([*CHECK, "--bom", str(target), *(["--force"] if force else [])])
    assert code == 2
    assert f"{target}: {words}" in " ".join(err.split())
    assert out == ""  # refused before any work: nothing checked, nothing printed
    after = target.lstat()
    assert (after.st_mode, after.st_ino) == (before.st_mode, before.st_ino)


def test_a_folder_that_refuses_files_is_found_before_any_work(tmp_path: Path) -> None:
    # /proc/self is a folder in which no file can be created (Linux procfs).
    code, out, err = _run([*CHECK, "--bom", "/proc/self/x.csv"])
    assert code == 2
    assert "/proc/self/x.csv: cannot create a file in folder /proc/self" in " ".join(err.split())
    assert out == ""


def test_an_input_is_never_an_output(tmp_path: Path) -> None:
    spec = tmp_path / "spec.yaml"
    spec.write_text(Path(MOTOR).read_text(encoding="utf-8"), encoding="utf-8")
    link = tmp_path / "again.csv"
    link.symlink_to(spec)
    argv = [*CHECK[:1], str(spec), *CHECK[2:], "--bom", str(link), "--force"]
    code, _, err = _run(argv)
    assert code == 2
    assert f"{link}: is an input of this run ({spec})" in " ".join(err.split())
    assert spec.read_text(encoding="utf-8") == Path(MOTOR).read_text(encoding="utf-8")


def test_new_files_get_the_umask_mode_and_replaced_files_keep_theirs(tmp_path: Path) -> None:
    old_mask = os.umask(0o027)
    try:
        fresh = tmp_path / "fresh.csv"
        write_text(fresh, "a\n")
        assert stat.S_IMODE(fresh.stat().st_mode) == 0o666 & ~0o027
        shared = tmp_path / "shared.csv"
        shared.write_text("old\n", encoding="utf-8")
        shared.chmod(0o644)
        write_text(shared, "new\n", force=True)
        assert stat.S_IMODE(shared.stat().st_mode) == 0o644
        assert shared.read_text(encoding="utf-8") == "new\n"
    finally:
        os.umask(old_mask)


def test_a_symlink_to_a_file_replaces_the_file_and_keeps_the_link(tmp_path: Path) -> None:
    real = tmp_path / "real.csv"
    real.write_text("old\n", encoding="utf-8")
    link = tmp_path / "link.csv"
    link.symlink_to(real)
    write_text(link, "new\n", force=True)
    assert link.is_symlink()
    assert real.read_text(encoding="utf-8") == "new\n"


def test_all_files_or_none(tmp_path: Path) -> None:
    first = tmp_path / "first.csv"
    first.write_text("keep me\n", encoding="utf-8")
    blocked = tmp_path / "blocked"
    os.mkfifo(blocked)
    with pytest.raises(OutputError):
        write_all([(first, b"new\n"), (blocked, b"x")], force=True)
    assert first.read_text(encoding="utf-8") == "keep me\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["blocked", "first.csv"]


def test_two_names_of_one_file_and_two_standard_outputs_are_refused(tmp_path: Path) -> None:
    real = tmp_path / "real.csv"
    real.write_text("x\n", encoding="utf-8")
    hard = tmp_path / "hard.csv"
    os.link(real, hard)
    with pytest.raises(OutputError, match="named for two outputs"):
        check_outputs([str(real), str(hard)], force=True)
    with pytest.raises(OutputError, match="standard output named for two outputs"):
        check_outputs(["-", "-"])


def test_one_export_can_go_to_standard_output(capfd: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run([*CHECK, "--bom", "-"])
    assert code in (0, 1)
    captured = capfd.readouterr()
    assert captured.out.startswith("positions,part_id,kind,")
    assert "wrote" not in out + err


def test_standard_output_beside_json_is_refused() -> None:
    code, out, err = _run([*CHECK, "--json", "--bom", "-"])
    assert code == 2
    assert "--json already prints its document on standard output" in " ".join(err.split())
    assert out == ""
