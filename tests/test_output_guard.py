"""The output folder is sitegen's alone: a build refuses, before reading anything, an output
folder whose replacement would delete files sitegen did not write; a symbolic link to the
output is published through; two spellings of one folder share one lock."""
from __future__ import annotations

import hashlib
import os
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sitegen import config
from sitegen.build import build
from sitegen.build_settings import BuildSettings
from sitegen.errors import BuildBusyError, SitegenError
from sitegen.writing import MARKER, build_lock, lock_path, write_site

from _sites import change_one_deck, copy_project, make_project, tree

ROOT = Path(__file__).resolve().parents[1]


def _run(*args, cwd=ROOT, env=None, timeout=120):
    return subprocess.run([sys.executable, "-m", "sitegen", *args], capture_output=True, text=True,
                          cwd=cwd, env=env, timeout=timeout)


def _hashes(root: Path) -> dict[str, str]:
    """Every file and link under ``root`` (links not followed): sha256 of a file, target of a link."""
    found = {}
    for top, dirs, files in os.walk(root, followlinks=False):
        for name in files + [d for d in dirs if os.path.islink(os.path.join(top, d))]:
            path = Path(top, name)
            rel = path.relative_to(root).as_posix()
            if path.is_symlink():
                found[rel] = "link:" + os.readlink(path)
            else:
                found[rel] = hashlib.sha256(path.read_bytes()).hexdigest()
    return found


def _one_clear_line(proc) -> str:
    assert proc.returncode == 1, (proc.returncode, proc.stdout[-500:], proc.stderr[-2000:])
    assert "Traceback" not in proc.stderr, proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), proc.stderr
    return lines[0]


def _demo_copy(folder: Path) -> Path:
    """The demo project (site.toml, demo_data/, content/) copied into ``folder``."""
    folder.mkdir(parents=True)
    shutil.copy2(ROOT / "site.toml", folder / "site.toml")
    shutil.copytree(ROOT / "demo_data", folder / "demo_data")
    shutil.copytree(ROOT / "content", folder / "content")
    return folder / "site.toml"


def _fake_repository(folder: Path) -> None:
    """A copy of a code repository: .git, sources, tests."""
    (folder / ".git" / "refs").mkdir(parents=True)
    (folder / ".git" / "HEAD").write_text("ref: refs/heads/main\n")
    shutil.copytree(ROOT / "sitegen", folder / "sitegen", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copytree(ROOT / "tests", folder / "tests", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy2(ROOT / "README.md", folder / "README.md")


# Each case: output as given to -o, and the part of the message that says why it is refused.
REFUSED = {
    "config folder": (".", r"-o '\.' \(.*\): it is the folder of the config file"),
    "empty": ("", r"setting '-o': the output folder is empty"),
    "data": ("data", r"-o 'data' .*holds the data of data\.deck_cards"),
    "notes": ("content", r"-o 'content' .*is the notes folder of site\.content"),
    "inside notes": ("content/site", r"is inside the notes folder of site\.content"),
    "templates": ("templates", r"-o 'templates' .*is the templates folder of site\.templates"),
    "cache": (".sitegen-cache", r"is the cache folder of cache\.folder"),
    "parent of the project": ("..", r"holds the folder of the config file"),
    "root": ("/", r"-o '/': it is the root of the file system"),
    "home": ("HOME", r"it is your home folder"),
    "repository copy": ("repo", r"it is a folder sitegen did not write \(it holds '\.git/HEAD'"),
    "foreign folder": ("www", r"it is a folder sitegen did not write \(it holds 'index\.html'.* no \.sitegen-output"),
    "a file": ("notes.txt", r"it is a file, not a folder"),
}


@pytest.mark.parametrize("case", list(REFUSED))
def test_output_that_would_delete_files_is_refused_and_nothing_changes(tmp_path, case):
    given_output, expected = REFUSED[case]
    project = make_project(tmp_path / "work" / "guide")
    guide = project.parent
    (guide / ".sitegen-cache").mkdir()
    (guide / ".sitegen-cache" / "kept.entry").write_bytes(b"an analysis kept from an earlier build")
    (guide / "notes.txt").write_text("my own notes\n")
    _fake_repository(guide / "repo")
    (guide / "www").mkdir()
    (guide / "www" / "index.html").write_text("<p>my own page</p>\n")
    home = tmp_path / "home"
    (home / "letters").mkdir(parents=True)
    (home / "letters" / "one.txt").write_text("dear reader\n")
    env = {**os.environ, "HOME": str(home)}
    if given_output == "HOME":
        given_output = str(home)
    before = _hashes(tmp_path)
    proc = _run("build", "-q", "site.toml", "-o", given_output, cwd=guide, env=env)
    line = _one_clear_line(proc)
    assert re.search(expected, line), line
    if given_output:
        assert "give -o a folder of its own" in line  # says how to proceed
    assert _hashes(tmp_path) == before  # every file as it was, and nothing new (not even a lock file)


def test_demo_data_folder_as_output_is_refused(tmp_path):
    # The demo project: `-o demo_data` would have deleted the decks and card rows.
    project = _demo_copy(tmp_path / "demo")
    before = _hashes(tmp_path)
    line = _one_clear_line(_run("build", "-q", str(project), "-o", "demo_data", cwd=project.parent))
    assert "holds the data of data.deck_cards" in line and "demo_data" in line, line
    assert _hashes(tmp_path) == before


@pytest.mark.parametrize("value, expected", [
    ("", r"setting 'site\.output': is empty .*such as output = \"site\""),
    (".", r"site\.output '\.' \(.*\): it is the folder of the config file.*set site\.output in .*site\.toml"),
    ("content", r"site\.output 'content' .*is the notes folder"),
])
def test_site_output_setting_is_named_in_the_message(tmp_path, value, expected):
    project = make_project(tmp_path / "guide")
    text = project.read_text(encoding="utf-8").replace("[site]\n", f'[site]\noutput = "{value}"\n', 1)
    project.write_text(text, encoding="utf-8")
    before = _hashes(tmp_path)
    line = _one_clear_line(_run("build", "-q", str(project)))
    assert re.search(expected, line), line
    assert _hashes(tmp_path) == before


def test_serve_watch_refuses_the_same_outputs(tmp_path):
    # serve --watch rebuilds into the output: it refuses at once instead of serving.
    project = make_project(tmp_path / "guide")
    text = project.read_text(encoding="utf-8").replace("[site]\n", '[site]\noutput = "."\n', 1)
    project.write_text(text, encoding="utf-8")
    before = _hashes(tmp_path)
    line = _one_clear_line(_run("serve", "--watch", "--port", "0", str(project), timeout=60))
    assert "it is the folder of the config file" in line
    assert _hashes(tmp_path) == before


def test_a_folder_sitegen_wrote_is_replaced_and_other_outputs_are_accepted(tmp_path):
    project = make_project(tmp_path / "guide")
    site = project.parent / "site"
    build(project, quiet=True, workers=1)
    assert (site / MARKER).is_file() and (site / "index.html").is_file()
    (site / "stray.html").write_text("left by hand in sitegen's folder")
    build(project, quiet=True, workers=1)  # its own folder: replaced whole
    assert not (site / "stray.html").exists() and (site / MARKER).is_file()
    empty = tmp_path / "empty"
    empty.mkdir()
    report = build(project, quiet=True, workers=1, output=empty)
    assert report.written.files > 10 and (empty / MARKER).is_file()
    fresh = tmp_path / "deep" / "new" / "site"
    build(project, quiet=True, workers=1, output=fresh)
    assert tree(fresh) == tree(empty) == tree(site)


def test_a_site_from_before_the_marker_is_adopted_only_when_the_cache_recorded_every_file(tmp_path):
    # An earlier sitegen wrote no marker: the cache's record of the last build (each file's size
    # and time) is how its folder is recognised.
    project = make_project(tmp_path / "guide")
    site = project.parent / "site"
    build(project, quiet=True, workers=1)
    (site / MARKER).unlink()
    build(project, quiet=True, workers=1)  # the files are as the last build left them: adopted
    assert (site / MARKER).is_file()
    (site / MARKER).unlink()
    (site / "my-page.html").write_text("mine")
    before = _hashes(tmp_path)
    with pytest.raises(SitegenError, match=r"site\.output 'site' .*a folder sitegen did not write .*my-page\.html"):
        build(project, quiet=True, workers=1)
    assert _hashes(tmp_path) == before
    (site / "my-page.html").unlink()
    (site / "index.html").write_text("edited by hand")  # no longer as recorded
    with pytest.raises(SitegenError, match="a folder sitegen did not write"):
        build(project, quiet=True, workers=1)


# -- symbolic links -------------------------------------------------------------------------


def test_symlinked_output_is_published_through_its_target(tmp_path):
    project = make_project(tmp_path / "guide")
    www = tmp_path / "srv" / "www"
    www.mkdir(parents=True)
    link = project.parent / "site"
    link.symlink_to(www / "guide", target_is_directory=True)
    build(project, quiet=True)
    assert link.is_symlink() and os.readlink(link) == str(www / "guide")
    first = tree(www / "guide")
    assert "index.html" in first and MARKER in first
    change_one_deck(project.parent)
    build(project, quiet=True)  # the second build works through the link too
    assert link.is_symlink() and os.readlink(link) == str(www / "guide")
    clean = copy_project(project.parent, tmp_path / "clean")
    build(clean, quiet=True)
    assert tree(www / "guide") == tree(clean.parent / "site") != first  # the target holds the new site
    leftovers = [p.name for d in (project.parent, www) for p in d.iterdir()
                 if p.name.endswith((".new", ".old"))]
    assert leftovers == []


def test_two_spellings_of_one_output_share_one_lock(tmp_path):
    project = make_project(tmp_path / "guide")
    site = project.parent / "site"
    site.mkdir()
    alias = project.parent / "alias"
    alias.symlink_to("site", target_is_directory=True)
    assert lock_path(site) == lock_path(alias) == lock_path(project.parent / "x" / ".." / "site")
    with build_lock(site):
        proc = _run("build", "-q", "site.toml", "-o", "./alias", cwd=project.parent)
        assert "another build of this site is running" in _one_clear_line(proc)
    with build_lock(alias):
        with pytest.raises(BuildBusyError, match="another build of this site is running"):
            build(project, quiet=True, output=project.parent / "site")
    assert not any(site.iterdir())  # neither build wrote anything


# -- property: random layouts never lose a file sitegen did not write -----------------------

FOLDERS = ["p", "p/a", "p/a/b", "p/b", "q", "q/c"]
OUTPUTS = FOLDERS + ["p/site", "p/site/x", "p/empty", "p/new", "p/a/new", "q/c/new", "p/site/inner",
                     "p/lnk", "p/lnk/new", "p/data.csv"]
SITE_FILES = {"index.html": b"<p>new site</p>", "sub/page.html": b"<p>page</p>"}
SITE_BEFORE = {"index.html": b"<p>old site</p>", "old.html": b"gone next build"}
#: Where the config, data, notes, templates and cache may be: also inside a folder sitegen wrote.
ROLE_FOLDERS = FOLDERS + ["p/site/x"]


def _world(base: Path, layout: dict) -> None:
    """Folders each holding a file of their own, the data, notes, templates and cache where the
    layout puts them, a folder sitegen wrote (p/site), an empty one, and p/lnk, a link."""
    for name in FOLDERS:
        (base / name).mkdir(parents=True, exist_ok=True)
        (base / name / f"own-{name.replace('/', '-')}.txt").write_text(f"user file in {name}")
    (base / "p" / "data.csv").write_text("not a folder")
    write_site(base / "p" / "site", SITE_BEFORE)
    (base / "p" / "site" / "x").mkdir()  # a user's folder put inside sitegen's (holds a role or nothing)
    (base / layout["config"] / "site.toml").write_text("[site]\n")
    (base / layout["data"] / "decks.csv").write_text("deck_id,season,leader\n")
    for role in ("content", "templates", "cache"):
        (base / layout[role] / f"{role}-file.txt").write_text(role)
    (base / "p" / "empty").mkdir()
    (base / "p" / "lnk").symlink_to(base / layout["link"], target_is_directory=True)


def _config(base: Path, layout: dict) -> config.Config:
    root = base / layout["config"]
    rel = lambda name: os.path.relpath(base / name, root)  # noqa: E731 - paths as a user writes them
    data = {"decklists": rel(layout["data"])} if layout["data_is_folder"] else {"decks": rel(f"{layout['data']}/decks.csv")}
    raw = {"site": {"output": rel(layout["output"]), "content": rel(layout["content"]),
                    "templates": rel(layout["templates"])},
           "data": data, "cache": {"folder": rel(layout["cache"])}}
    return config.from_dict(raw, root=root, source=root / "site.toml")


layouts = st.fixed_dictionaries({
    "config": st.sampled_from(["p", "p/a", "q", "p/site/x"]),
    "data": st.sampled_from(ROLE_FOLDERS),
    "data_is_folder": st.booleans(),
    "content": st.sampled_from(ROLE_FOLDERS),
    "templates": st.sampled_from(ROLE_FOLDERS),
    "cache": st.sampled_from(ROLE_FOLDERS),
    "link": st.sampled_from(FOLDERS + ["p/site", "p/ghost/guide"]),
    "output": st.sampled_from(OUTPUTS),
    "by_option": st.booleans(),
})


def test_random_layouts_never_lose_a_file_sitegen_did_not_write():
    outcomes = {"accepted": 0, "refused": 0}  # examples of each, across the run

    @settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
    @given(layout=layouts)
    def check(layout):
        with tempfile.TemporaryDirectory() as tmp:
            base = Path(tmp).resolve()
            _world(base, layout)
            cfg = _config(base, layout)
            before = _hashes(base)
            ours = {f"p/site/{name}" for name in [*SITE_BEFORE, MARKER]}  # written by sitegen
            override = str(base / layout["output"]) if layout["by_option"] else None
            try:
                out, adopt = BuildSettings.from_config(cfg).checked_output(override)  # as build() does, then lock and write
                with build_lock(out):
                    write_site(out, SITE_FILES, adopt=adopt)
            except SitegenError:
                outcomes["refused"] += 1
                assert _hashes(base) == before  # a refused output changes nothing
                return
            outcomes["accepted"] += 1
            after = _hashes(base)
            lost = {name for name in before if name not in ours and after.get(name) != before[name]}
            assert not lost, (layout, sorted(lost))
            assert (out / MARKER).is_file() and (out / "index.html").read_bytes() == SITE_FILES["index.html"]

    check()
    # The guard must not pass by refusing everything, nor by accepting everything.
    assert outcomes["accepted"] >= 10 and outcomes["refused"] >= 10, outcomes
