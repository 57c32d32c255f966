"""The reuse layer (sitegen/reuse): code salts follow the import graph, so moving or renaming
code can never leave an earlier build's work in use.

The outside reference for "what importing a module runs" is Python's own ``modulefinder``
(standard library), which reads the compiled bytecode of each module rather than its syntax
tree; it is kept to one package so it does not walk the numeric libraries.
"""
from __future__ import annotations

import hashlib
import os
from modulefinder import ModuleFinder
from pathlib import Path

import pytest

import sitegen
from sitegen.reuse import digest, files, keys

SITEGEN_PARENT = str(Path(sitegen.__file__).resolve().parent.parent)


class _OnePackage(ModuleFinder):
    """modulefinder, following imports within one package only."""

    def __init__(self, package: str, path: list[str]) -> None:
        super().__init__(path=path)
        self.package = package

    def import_module(self, partname, fqname, parent):
        if fqname.split(".")[0] != self.package:
            return None  # a library: modulefinder records it as not found and goes on
        return super().import_module(partname, fqname, parent)


def python_finds(roots, package: str = "sitegen", path: str = SITEGEN_PARENT) -> dict[str, Path]:
    """The package's modules importing ``roots`` runs, as the standard library's modulefinder finds them."""
    finder = _OnePackage(package, [path])
    for root in roots:
        finder.import_hook(root)
    return {name: Path(m.__file__).resolve() for name, m in finder.modules.items()
            if name.split(".")[0] == package and m.__file__}


def digest_of(files: dict[str, Path], package: str = "sitegen") -> str:
    """The code digest recomputed from a file set found elsewhere (the same layout as code_digest's)."""
    h = hashlib.sha256(f"code\0{package}\0".encode())
    for name in sorted(files):
        digest.feed_labelled(h, name, files[name].read_bytes())
    return h.hexdigest()


@pytest.mark.parametrize("kind", sorted(keys.CODE_ROOTS))
def test_each_code_salt_covers_every_module_its_roots_import(kind):
    roots = keys.CODE_ROOTS[kind]
    reference = python_finds(roots)
    ours = {name: path.resolve() for name, path in digest.imported_modules(roots).items()}
    assert set(roots) <= set(reference)  # the roots are real modules...
    assert len(reference) > len(roots)  # ...that import other sitegen modules
    missing = sorted(set(reference) - set(ours))
    assert not missing, f"{kind}: modules imported by {roots} but not in its code digest: {missing}"
    assert ours == reference  # nothing more either: a module nobody imports does not stale the cache
    assert keys.code_salt(kind) == digest_of(reference)  # the digest hashes exactly those files


def test_the_stage_salts_follow_their_roots():
    # The analysis salt sees the clustering code and the partition key's code, found by import.
    analysis = digest.imported_modules(keys.CODE_ROOTS["analysis"])
    assert {"sitegen.analysis.cluster", "sitegen.model", "sitegen.reuse.digest"} <= set(analysis)
    assert "sitegen.site.render" not in analysis
    assert "sitegen.partitions" in digest.imported_modules(keys.CODE_ROOTS["split"])
    assert "sitegen.site.templating" in digest.imported_modules(keys.CODE_ROOTS["pages"])


def _write(folder: Path, files: dict[str, str]) -> None:
    for name, text in files.items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")


def _bump_time(path: Path) -> None:
    # The syntax-tree cache is keyed by size and time of change: make sure an edit is seen.
    st = path.stat()
    os.utime(path, ns=(st.st_atime_ns, st.st_mtime_ns + 10_000_000))


def test_moving_and_renaming_code_changes_the_digest_and_never_breaks_it(tmp_path):
    pkg = tmp_path / "toypkg"
    _write(pkg, {
        "__init__.py": "",
        "root.py": "from .helpers import shout\n\ndef run():\n    from . import later\n    return shout(later.X)\n",
        "helpers.py": "def shout(x):\n    return str(x).upper()\n",
        "later.py": "X = 'a'\n",
        "unrelated.py": "Y = 1\n",
    })

    def ours():
        return digest.code_digest(["toypkg.root"], package="toypkg", folder=pkg)

    def files():
        return {n: p.resolve() for n, p in digest.imported_modules(["toypkg.root"], package="toypkg", folder=pkg).items()}

    def reference():
        return python_finds(["toypkg.root"], package="toypkg", path=str(tmp_path))

    first = ours()
    assert files() == reference() == {n: (pkg / f).resolve() for n, f in (
        ("toypkg", "__init__.py"), ("toypkg.root", "root.py"), ("toypkg.helpers", "helpers.py"),
        ("toypkg.later", "later.py"))}
    assert first == digest_of(reference(), "toypkg")

    (pkg / "unrelated.py").write_text("Y = 2\n", encoding="utf-8")
    assert ours() == first  # a module the root never imports is not in its salt

    # The helper moves into a new subpackage; the old module only names it.
    _write(pkg, {"sub/__init__.py": "", "sub/moved.py": "def shout(x):\n    return str(x).upper()\n",
                 "helpers.py": "from .sub.moved import shout  # noqa: F401\n"})
    _bump_time(pkg / "helpers.py")
    moved = ours()
    assert moved != first
    assert files() == reference() and "toypkg.sub.moved" in files()
    # An edit of the moved code changes the salt (a salt naming helpers.py by path would not see it).
    (pkg / "sub" / "moved.py").write_text("def shout(x):\n    return str(x).lower()\n", encoding="utf-8")
    assert ours() != moved

    # helpers.py renamed to tools.py: the digest follows, with no file named anywhere.
    (pkg / "helpers.py").rename(pkg / "tools.py")
    (pkg / "root.py").write_text((pkg / "root.py").read_text().replace(".helpers", ".tools"), encoding="utf-8")
    _bump_time(pkg / "root.py")
    renamed = files()
    assert renamed == reference()
    assert "toypkg.tools" in renamed and "toypkg.helpers" not in renamed
    assert ours() == digest_of(reference(), "toypkg")


def test_a_root_that_is_no_module_is_an_error_not_a_silent_miss(tmp_path):
    with pytest.raises(LookupError, match="sitegen.no_such_module"):
        digest.imported_modules(["sitegen.no_such_module"])


def test_a_file_stamp_is_name_size_and_time_as_the_system_gives_them(tmp_path):
    f = tmp_path / "decks.csv"
    f.write_bytes(b"deck_id\n1\n")
    st = os.stat(f)  # the reference: the operating system's own record of the file
    assert files.file_stamp(f) == f"{f}|{st.st_size}|{st.st_mtime_ns}"
    assert files.file_stat(f) == (10, st.st_mtime_ns)
    assert files.file_stamp(tmp_path / "gone.csv") is None
    assert files.file_stat(tmp_path, regular_only=True) is None  # a folder is not a regular file
