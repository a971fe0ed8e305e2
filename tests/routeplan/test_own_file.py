"""Single files routeplan writes (``routeplan diff --map FILE``): a new file, or one carrying
routeplan's mark, is written all or nothing; anything else is never replaced (README,
"Output folders": a user's files are sacred)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from routeplan.errors import FolderError
from routeplan.folder import MARK_WINDOW, check_own_file, write_own_file

MARK = b"<!-- mark of a file routeplan wrote -->"


def page(text: str) -> bytes:
    return b"<html><head>" + MARK + b"</head><body>" + text.encode() + b"</body></html>"


def message(exc: pytest.ExceptionInfo) -> str:
    return str(exc.value)


def test_a_new_file_is_written_with_the_umask_permissions(tmp_path):
    target = tmp_path / "changes.html"
    old = os.umask(0o027)
    try:
        write_own_file(target, page("one"), MARK)
    finally:
        os.umask(old)
    assert target.read_bytes() == page("one")
    assert target.stat().st_mode & 0o777 == 0o640  # 0o666 & ~0o027
    assert sorted(p.name for p in tmp_path.iterdir()) == ["changes.html"]  # no temporary left


def test_a_file_routeplan_wrote_is_replaced(tmp_path):
    target = tmp_path / "changes.html"
    write_own_file(target, page("one"), MARK)
    write_own_file(target, page("two"), MARK)
    assert target.read_bytes() == page("two")


def test_a_users_file_is_never_replaced(tmp_path):
    target = tmp_path / "notes.html"
    target.write_bytes(b"<html>my notes</html>")
    with pytest.raises(FolderError) as exc:
        write_own_file(target, page("one"), MARK)
    assert str(target) in message(exc)
    assert "was not written by routeplan" in message(exc)
    assert target.read_bytes() == b"<html>my notes</html>"


def test_the_mark_must_be_near_the_start(tmp_path):
    """A user's file quoting the mark far into it is still the user's."""
    target = tmp_path / "long.html"
    target.write_bytes(b" " * MARK_WINDOW + MARK)
    with pytest.raises(FolderError, match="was not written by routeplan"):
        check_own_file(target, MARK)
    with pytest.raises(ValueError):
        write_own_file(tmp_path / "x.html", b" " * MARK_WINDOW + MARK, MARK)


@pytest.mark.parametrize("what", ["folder", "link", "missing parent", "dot"])
def test_paths_that_are_not_a_new_or_own_file_are_refused(tmp_path, what):
    mine = tmp_path / "mine.html"
    write_own_file(mine, page("one"), MARK)
    if what == "folder":
        target = tmp_path / "sub"
        target.mkdir()
        words = "is there and is not a file"
    elif what == "link":  # even a link to a file routeplan wrote: the link is not replaced
        target = tmp_path / "link.html"
        target.symlink_to(mine)
        words = "is a symbolic link"
    elif what == "missing parent":
        target = tmp_path / "nowhere" / "map.html"
        words = f"its folder {tmp_path / 'nowhere'} does not exist"
    else:
        target = Path(".")
        words = "is not a file name"
    with pytest.raises(FolderError) as exc:
        check_own_file(target, MARK)
    assert words in message(exc)
    assert mine.read_bytes() == page("one")


def test_a_folder_that_cannot_be_written_is_refused_first(tmp_path, monkeypatch):
    """(Tests run as root in CI, where a read-only folder is writable: the permission check
    itself is made to say no.)"""
    ro = tmp_path / "ro"
    ro.mkdir()
    real_access = os.access
    monkeypatch.setattr(os, "access", lambda p, m: Path(p) != ro and real_access(p, m))
    with pytest.raises(FolderError) as exc:
        check_own_file(ro / "map.html", MARK)
    assert f"no permission to write into {ro}" in message(exc)


def test_a_failed_write_leaves_the_old_file_and_no_temporary(tmp_path, monkeypatch):
    target = tmp_path / "changes.html"
    write_own_file(target, page("one"), MARK)

    def fail(*_a, **_k):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", fail)
    with pytest.raises(OSError):
        write_own_file(target, page("two"), MARK)
    assert target.read_bytes() == page("one")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["changes.html"]
