"""Where the packaged templates and assets are, installed or in a clone."""
from __future__ import annotations

from pathlib import Path

_HERE = Path(__file__).resolve().parent


def default_templates_dir() -> Path:
    """The default templates folder: inside the wheel, or the clone's templates/."""
    packaged = _HERE / "templates"
    if packaged.is_dir():
        return packaged
    return _HERE.parent / "templates"
