"""A small helper for tests that need a real git repository (made in a temporary folder).

Common practice, no source: an identity set in the repository, and no global or system
configuration, so the repository behaves the same on every machine.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from collections.abc import Mapping
from pathlib import Path


class Repo:
    def __init__(self, path: Path, init: bool = True) -> None:
        self.path = path
        if init:
            path.mkdir(parents=True, exist_ok=True)
            self.git("init", "-q", "-b", "main")
            self.git("config", "user.name", "Test Committer")
            self.git("config", "user.email", "tests@example.org")
            self.git("config", "commit.gpgsign", "false")
            self.git("config", "tag.gpgsign", "false")

    @classmethod
    def existing(cls, path: Path) -> Repo:
        return cls(path, init=False)

    def git(self, *args: str, when: str | None = None) -> str:
        env = {k: v for k, v in os.environ.items() if not k.startswith("GIT_")}
        env.update(GIT_CONFIG_NOSYSTEM="1", GIT_CONFIG_GLOBAL=os.devnull, LC_ALL="C")
        if when is not None:
            env.update(GIT_AUTHOR_DATE=when, GIT_COMMITTER_DATE=when)
        done = subprocess.run(["git", *args], cwd=self.path, env=env, capture_output=True, text=True, check=True)
        return done.stdout

    def write(self, files: Mapping[str, str]) -> None:
        for rel, text in files.items():
            target = self.path / rel
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_text(text, encoding="utf-8")

    def remove(self, *paths: str) -> None:
        for rel in paths:
            target = self.path / rel
            shutil.rmtree(target) if target.is_dir() else target.unlink()

    def move(self, old: str, new: str) -> None:
        (self.path / new).parent.mkdir(parents=True, exist_ok=True)
        (self.path / old).rename(self.path / new)

    def commit(self, message: str, when: str) -> str:
        self.git("add", "-A")
        self.git("commit", "-q", "-m", message, when=when)
        return self.git("rev-parse", "HEAD").strip()

    def tag(self, name: str, annotated: bool = False, when: str | None = None) -> None:
        if annotated:
            self.git("tag", "-a", name, "-m", f"Release {name}", when=when)
        else:
            self.git("tag", name)
