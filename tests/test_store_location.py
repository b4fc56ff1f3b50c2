"""Where the store lives: a network file system gets a warning, a read-only folder one line."""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

import pytest

import structurize.store as store_module
from structurize.store import Store, StoreError, network_filesystem

from test_store import extract, make_docs


def _mounts(tmp_path: Path, lines: list[str]) -> Path:
    mounts = tmp_path / "mounts"
    mounts.write_text("".join(f"{line}\n" for line in lines), encoding="utf-8")
    return mounts


@pytest.mark.parametrize(
    "lines, kind",
    [
        (["/dev/sda1 / ext4 rw 0 0"], None),
        (["/dev/sda1 / ext4 rw 0 0", "server:/hr {root} nfs4 rw 0 0"], "nfs4"),
        (["/dev/sda1 / ext4 rw 0 0", "//server/hr {root} cifs rw 0 0"], "cifs"),
        (["server:/hr {root} nfs rw 0 0", "tmpfs {root}/local tmpfs rw 0 0"], None),  # the deeper mount wins
    ],
)
def test_network_file_systems_are_recognised(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, lines: list[str], kind: str | None) -> None:
    # SQLite documentation, "How To Corrupt An SQLite Database File" §2.1: locks on network
    # file systems are not reliable.
    root = tmp_path / "share"
    (root / "local").mkdir(parents=True)
    monkeypatch.setattr(store_module, "MOUNTS", _mounts(tmp_path, [line.format(root=root) for line in lines]))
    assert network_filesystem(root / "local" / "hr.sqlite") == kind


def test_a_store_on_a_network_share_gets_one_warning(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    docs, out, store = tmp_path / "docs", tmp_path / "out", tmp_path / "share" / "hr.sqlite"
    make_docs(docs, 1)
    monkeypatch.setattr(store_module, "MOUNTS", _mounts(tmp_path, [f"server:/hr {tmp_path / 'share'} nfs4 rw 0 0"]))
    done = extract(docs, out, store)
    assert done.returncode == 0
    assert [line for line in done.stderr.splitlines() if line] == [
        f"structurize: {store}: warning: the store is on a network file system (nfs4); SQLite's locking is not reliable there: "
        "keep it on a local disk"
    ]


def test_a_store_in_a_read_only_folder_is_one_clear_line(tmp_path: Path) -> None:
    folder = tmp_path / "ro"
    folder.mkdir()
    mounted = os.geteuid() == 0 and subprocess.run(
        ["mount", "-t", "tmpfs", "-o", "size=1m,ro", "tmpfs", str(folder)], capture_output=True).returncode == 0
    if not mounted:
        if os.geteuid() == 0:
            pytest.skip("root writes a chmod 555 folder, and no read-only tmpfs could be mounted")
        folder.chmod(0o555)
    try:
        with pytest.raises(StoreError, match=f"store {folder / 'hr.sqlite'}: the store or its folder is read-only"):
            Store.open(folder / "hr.sqlite")
    finally:
        if mounted:
            subprocess.run(["umount", str(folder)], capture_output=True)
        else:
            folder.chmod(0o755)
