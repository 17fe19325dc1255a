"""Output files: all written or none, regular files only, never an input, an existing file's mode kept."""

from __future__ import annotations

import os
import stat
from pathlib import Path
from typing import Any

import pytest

from mergecheck.errors import InputError
from mergecheck.output_files import Output, write_all


@pytest.fixture
def site(repo: Path, tmp_path: Path) -> Path:
    copy = tmp_path / "site.yaml"
    copy.write_text((repo / "examples" / "willowmere-level.yaml").read_text())
    return copy


def test_a_failing_later_output_leaves_the_earlier_ones_unwritten(cli: Any, site: Path, tmp_path: Path) -> None:
    """The Markdown file is fine, the HTML one names a missing folder: neither is written."""
    report = tmp_path / "report.md"
    run = cli("check", site, "--markdown", report, "--html", tmp_path / "missing" / "r.html")
    assert run.code == 2 and "--html" in run.stderr and "does not exist" in run.stderr, run.stderr
    assert not report.exists()


def test_a_write_failing_part_way_changes_nothing_and_leaves_no_temporary(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The second file cannot be written (a full disk, simulated) after the first is staged: the first target
    keeps its old text and no temporary file is left behind."""
    import mergecheck.output_files as output_files

    first, second = tmp_path / "a.json", tmp_path / "b.csv"
    first.write_text("old")
    stage = output_files._stage

    def full_disk(output: Output, target: Path) -> str:
        if output.option == "--csv":
            raise OSError(28, "No space left on device")
        return stage(output, target)

    monkeypatch.setattr(output_files, "_stage", full_disk)
    with pytest.raises(InputError, match=r"--csv: .*b\.csv: cannot write \(No space left on device\)"):
        write_all([Output("--json", str(first), "new"), Output("--csv", str(second), "x")])
    assert first.read_text() == "old" and sorted(p.name for p in tmp_path.iterdir()) == ["a.json"]


def test_the_input_file_is_never_an_output(cli: Any, site: Path) -> None:
    before = site.read_text()
    run = cli("check", site, "--json", site)
    assert run.code == 2 and "is an input of this run" in run.stderr and site.read_text() == before


def test_two_outputs_never_name_one_file(cli: Any, site: Path, tmp_path: Path) -> None:
    run = cli("check", site, "--markdown", tmp_path / "r.txt", "--html", tmp_path / "r.txt")
    assert run.code == 2 and "--html" in run.stderr and "also the output of --markdown" in run.stderr


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes are POSIX")
def test_a_named_pipe_or_a_device_is_not_replaced(cli: Any, site: Path, tmp_path: Path) -> None:
    """Before, a pipe given as the output was replaced by an ordinary file, and so (as root) was /dev/null."""
    pipe = tmp_path / "pipe"
    os.mkfifo(pipe)
    run = cli("check", site, "--json", pipe)
    assert run.code == 2 and "is a named pipe" in run.stderr and stat.S_ISFIFO(pipe.stat().st_mode)
    run = cli("check", site, "--markdown", "/dev/null")
    assert run.code == 2 and "is a device" in run.stderr and stat.S_ISCHR(os.stat("/dev/null").st_mode)


def test_a_symbolic_link_is_followed_and_stays_a_link(cli: Any, site: Path, tmp_path: Path) -> None:
    target, link = tmp_path / "real.json", tmp_path / "link.json"
    target.write_text("{}")
    link.symlink_to(target)
    assert cli("check", site, "--json", link).code == 0
    assert link.is_symlink() and '"verdict"' in target.read_text()


def test_a_read_only_file_is_refused_and_an_existing_mode_kept(cli: Any, site: Path, tmp_path: Path) -> None:
    """Refused even for root, whom the system would let write it; a writable file keeps its own mode."""
    locked, kept = tmp_path / "locked.md", tmp_path / "kept.md"
    locked.write_text("signed copy")
    locked.chmod(0o444)
    run = cli("check", site, "--markdown", locked)
    assert run.code == 2 and "is read-only" in run.stderr and locked.read_text() == "signed copy"
    kept.write_text("")
    kept.chmod(0o640)
    assert cli("check", site, "--markdown", kept).code == 0
    assert stat.S_IMODE(kept.stat().st_mode) == 0o640 and "Willowmere" in kept.read_text()


def test_a_batch_never_writes_over_a_site_it_reads(cli: Any, repo: Path, tmp_path: Path) -> None:
    folder = tmp_path / "sites"
    folder.mkdir()
    (folder / "a.yaml").write_text((repo / "examples" / "willowmere-level.yaml").read_text())
    run = cli("batch", folder, "--json", folder / "a.yaml")
    assert run.code == 2 and "is an input of this run" in run.stderr


def test_an_input_reached_by_another_name_is_not_an_output(cli: Any, site: Path, tmp_path: Path) -> None:
    """A symbolic link or a hard link to the site file names the same file: refused like the file itself."""
    before = site.read_text()
    soft, hard = tmp_path / "soft.json", tmp_path / "hard.json"
    soft.symlink_to(site)
    os.link(site, hard)
    for name in (soft, hard):
        run = cli("check", site, "--json", name)
        assert run.code == 2 and "is an input of this run" in run.stderr and site.read_text() == before
