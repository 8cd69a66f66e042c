"""Where the compiled kernels are cached (risk/kernel_cache.py).

Root ignores permission bits, so "not writable" is simulated by wrapping ``os.access`` (as
the kernel answers access(2) for a read-only install). The XDG base-directory convention
($XDG_CACHE_HOME, else ~/.cache) is common practice on Linux.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

import risk.kernel_cache as kc


@pytest.fixture
def read_only(monkeypatch: pytest.MonkeyPatch):
    """Make os.access say 'not writable' for the folders added to the returned set."""
    locked: set[Path] = set()
    real = os.access

    def access(path, mode, **kw):  # noqa: ANN001, ANN202 - os.access's signature
        if mode & os.W_OK and any(Path(path) == p or p in Path(path).parents for p in locked):
            return False
        return real(path, mode, **kw)

    monkeypatch.setattr(kc.os, "access", access)
    return locked


def test_writable_install_keeps_numba_default(tmp_path: Path) -> None:
    mod = tmp_path / "site" / "mechanics"
    mod.mkdir(parents=True)
    c = kc.choose(module_dir=mod, environ={"HOME": str(tmp_path / "home")})
    assert c.path is None and c.reason == "in-tree" and not (tmp_path / "home").exists()


def test_read_only_install_uses_the_user_cache_once(tmp_path: Path, read_only) -> None:
    mod = tmp_path / "site" / "mechanics"
    (mod / "__pycache__").mkdir(parents=True)
    read_only.add(tmp_path / "site")
    env = {"HOME": str(tmp_path / "home")}
    first = kc.choose(module_dir=mod, environ=env)
    assert first.path == tmp_path / "home" / ".cache" / "risk" / "numba"
    assert first.reason == "user-cache" and first.created and first.path.is_dir()
    second = kc.choose(module_dir=mod, environ=env)
    assert second.path == first.path and not second.created  # said once: on creation only
    xdg = kc.choose(module_dir=mod, environ={**env, "XDG_CACHE_HOME": str(tmp_path / "xdg")})
    assert xdg.path == tmp_path / "xdg" / "risk" / "numba"


def test_read_only_home_falls_back_to_the_temporary_folder(tmp_path: Path, read_only,
                                                           monkeypatch: pytest.MonkeyPatch
                                                           ) -> None:
    mod = tmp_path / "site" / "mechanics"
    mod.mkdir(parents=True)
    home = tmp_path / "home"
    (home / ".cache" / "risk" / "numba").mkdir(parents=True)
    read_only.update({tmp_path / "site", home})
    monkeypatch.setattr(kc.tempfile, "gettempdir", lambda: str(tmp_path / "tmp"))
    c = kc.choose(module_dir=mod, environ={"HOME": str(home)})
    assert c.reason == "temporary" and c.created
    assert c.path == tmp_path / "tmp" / f"risk-{os.getuid()}" / "numba"
    assert c.path.stat().st_mode & 0o777 == 0o700


def test_user_choice_stands(tmp_path: Path, read_only) -> None:
    read_only.add(tmp_path)
    c = kc.choose(module_dir=tmp_path, environ={"NUMBA_CACHE_DIR": "/somewhere/else"})
    assert c.path == Path("/somewhere/else") and c.reason == "user" and not c.created


def test_first_use_note_names_the_folder(monkeypatch: pytest.MonkeyPatch, tmp_path: Path
                                         ) -> None:
    monkeypatch.setattr(kc, "choice", kc.CacheChoice(tmp_path / "c", "user-cache", True))
    note = kc.first_use_note()
    assert note is not None and str(tmp_path / "c") in note and "read-only" in note
    monkeypatch.setattr(kc, "choice", kc.CacheChoice(tmp_path / "c", "user-cache", False))
    assert kc.first_use_note() is None


def test_warm_up_says_compiling_only_when_it_takes_long(monkeypatch: pytest.MonkeyPatch) -> None:
    # a slow load (compiling) is announced once, while it runs; a fast one (cached) is silent
    import time

    said: list[str] = []
    real = kc._load

    def slow(name: str) -> None:
        time.sleep(0.4)
        real(name)

    monkeypatch.setattr(kc, "_load", slow)
    took = kc.warm_up(notify=said.append, after=0.05)
    assert said == [kc.COMPILING] and took >= 0.4
    monkeypatch.setattr(kc, "_load", real)
    said.clear()
    kc.warm_up(notify=said.append, after=5.0)
    assert said == []


def test_warm_up_command() -> None:
    from typer.testing import CliRunner

    from risk.cli import app

    res = CliRunner().invoke(app, ["warm-up"])
    assert res.exit_code == 0 and "kernels ready in" in res.output
