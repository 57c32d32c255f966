"""The command line: help, one line per error, nothing written on bad input,
and an installed wheel that works without a clone."""
from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

from sitegen import config

from _sites import make_project, read_rows, write_rows

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def _run(*args, cwd=ROOT, env=None):
    return subprocess.run([sys.executable, "-m", "sitegen", *args], capture_output=True, text=True, cwd=cwd, env=env)


@pytest.mark.parametrize("command", [[], ["build"], ["serve"], ["new"]])
def test_help_for_each_command(command):
    proc = _run(*command, "--help")
    assert proc.returncode == 0 and "usage: sitegen" in proc.stdout


def _break(project, how):
    data = project.parent / "data"
    header, rows = read_rows(data / "deck_cards.csv")
    if how == "quantity":
        rows[4][2] = "two"
    elif how == "many":
        for r in rows[:30]:
            r[2] = "-1"
    elif how == "column":
        header[2] = "qty"
    write_rows(data / "deck_cards.csv", header, rows)


@pytest.mark.parametrize("how, expected", [
    ("quantity", r"deck_cards\.csv, row 6, column 'quantity'.*'two'"),
    ("column", r"deck_cards\.csv.*quantity"),
])
def test_bad_input_is_one_line_nonzero_exit_and_nothing_written(tmp_path, how, expected):
    import re

    project = make_project(tmp_path / "guide")
    _break(project, how)
    proc = _run("build", "--quiet", str(project))
    assert proc.returncode == 1
    lines = proc.stderr.strip().splitlines()
    assert lines and all(line.startswith("error: ") for line in lines)
    assert re.search(expected, lines[0]), lines[0]
    assert "Traceback" not in proc.stderr
    assert not (project.parent / "site").exists()
    assert not (project.parent / ".sitegen-cache").exists() or not any((project.parent / ".sitegen-cache").iterdir())


def test_many_errors_show_the_first_twenty_then_a_count(tmp_path):
    project = make_project(tmp_path / "guide")
    _break(project, "many")
    proc = _run("build", "-q", str(project))
    lines = proc.stderr.strip().splitlines()
    assert proc.returncode == 1
    assert len(lines) == 21 and "10 more" in lines[-1], lines[-3:]


def test_unknown_setting_is_one_line(tmp_path):
    project = make_project(tmp_path / "guide")
    project.write_text(project.read_text().replace("[cache]\n", "[cache]\nfolderr = 'x'\n", 1))
    proc = _run("build", "-q", str(project))
    assert proc.returncode == 1
    assert proc.stderr.strip().splitlines() == [
        f"error: {project}: setting 'cache.folderr': unknown setting; did you mean 'cache.folder'?"]


def test_new_refuses_a_folder_in_use(tmp_path):
    (tmp_path / "busy").mkdir()
    (tmp_path / "busy" / "x").write_text("x")
    proc = _run("new", str(tmp_path / "busy"))
    assert proc.returncode == 1 and "already exists" in proc.stderr


@pytest.mark.slow
def test_wheel_scaffold_and_build_outside_the_clone(tmp_path):
    # pip builds a real wheel (not editable); installed into a folder of its own and run from outside the repo,
    # `sitegen new` then `sitegen build` must work with the wheel's own templates and assets.
    wheels = tmp_path / "wheels"
    subprocess.run([sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w", str(wheels), ROOT],
                   check=True, capture_output=True, cwd=tmp_path)
    wheel = next(wheels.glob("sitegen-*.whl"))
    names = zipfile.ZipFile(wheel).namelist()
    assert "sitegen/templates/base.html" in names and any(n.startswith("sitegen/templates/assets/") for n in names)
    target = tmp_path / "installed"
    subprocess.run([sys.executable, "-m", "pip", "install", "-q", "--no-deps", "--target", str(target), str(wheel)],
                   check=True, capture_output=True)
    env = dict(os.environ, PYTHONPATH=str(target))
    outside = tmp_path / "elsewhere"
    outside.mkdir()
    where = subprocess.run([sys.executable, "-c", "import sitegen; print(sitegen.__file__)"],
                           capture_output=True, text=True, cwd=outside, env=env)
    assert where.stdout.startswith(str(target)), where.stdout + where.stderr
    proc = _run("new", "guide", cwd=outside, env=env)
    assert proc.returncode == 0, proc.stderr
    proc = _run("build", "guide/site.toml", cwd=outside, env=env)
    assert proc.returncode == 0, proc.stderr
    site = outside / "guide" / "site"
    assert (site / "index.html").is_file() and list((site / "assets").glob("*.js"))


def test_dev_sh_demo_names_the_demo_config():
    # Reads dev.sh, runs nothing: the README's demo command must name a config that exists (it once
    # named demo_data/site.toml, which does not), whose data files exist too.
    root = Path(__file__).resolve().parent.parent
    script = (root / "dev.sh").read_text(encoding="utf-8")
    demo = script.split("\n  demo)", 1)[1].split(";;", 1)[0]
    named = re.findall(r"\.venv/bin/sitegen (build|serve) (\S+)", demo)
    assert [verb for verb, _ in named] == ["build", "serve"]
    for _, path in named:
        assert (root / path).is_file(), path
        cfg = config.load(root / path)
        assert cfg.path("data.decks") == root / "demo_data" / "decks.csv"
        assert all(cfg.path(f"data.{name}").is_file() for name in ("decks", "deck_cards", "cards"))


@pytest.mark.parametrize("command", ["demo", "test"])
def test_dev_sh_stops_at_once_on_a_python_older_than_3_11(tmp_path, command):
    # A stand-in "python" that says it is 3.10: dev.sh must stop before making .venv, naming the version.
    shutil.copy(Path(ROOT) / "dev.sh", tmp_path / "dev.sh")
    fake = tmp_path / "python3.10"
    fake.write_text('#!/bin/sh\ncase "$*" in *"< (3, 11)"*) exit 1;; *) echo 3.10.2;; esac\n', encoding="utf-8")
    fake.chmod(0o755)
    proc = subprocess.run(["bash", str(tmp_path / "dev.sh"), command], capture_output=True, text=True,
                          env=dict(os.environ, PYTHON=str(fake)), timeout=60)
    assert proc.returncode == 1
    assert proc.stderr.strip().splitlines() == [
        f"dev.sh: '{fake}' is Python 3.10.2; sitegen needs 3.11 or newer: install it, or point PYTHON at one"
        " (PYTHON=python3.12 ./dev.sh ...)"]
    assert not (tmp_path / ".venv").exists()
