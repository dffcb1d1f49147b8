"""Fixtures of the Python tests: a run of the demo pipeline made once per
test session with the sheaf binary of this build (ctest passes
SHEAF_BINARY and SHEAF_SOURCE_DIR; PYTHONPATH names build/python)."""

import os
import subprocess

import pytest

SOURCE_DIR = os.environ.get("SHEAF_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
BINARY = os.environ.get("SHEAF_BINARY", os.path.join(SOURCE_DIR, "build", "sheaf"))


def run_sheaf(*args, stdin=None):
    return subprocess.run([BINARY, *args], input=stdin, capture_output=True, check=False)


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """A finished run of pipelines/demo.toml (several shards per split, in
    input order, eos after each side)."""
    out = tmp_path_factory.mktemp("demo") / "run"
    r = run_sheaf("run", os.path.join(SOURCE_DIR, "pipelines", "demo.toml"), "--out", str(out), "--quiet",
                  "--threads", "2")
    assert r.returncode == 0, r.stderr.decode()
    return out


def split_lines(run_dir, split):
    with open(os.path.join(run_dir, split + ".tsv"), encoding="utf-8") as f:
        return [line.rstrip("\n").split("\t") for line in f]


def shard_paths(run_dir, split):
    d = os.path.join(run_dir, "shards")
    return sorted(os.path.join(d, n) for n in os.listdir(d) if n.startswith(split + "."))
