"""What this installation and machine offer: where the packaged templates and assets are
(installed or in a clone), and how many cores this process may use."""
from __future__ import annotations

import os
from pathlib import Path

_HERE = Path(__file__).resolve().parent


def default_templates_dir() -> Path:
    """The default templates folder: inside the wheel, or the clone's templates/."""
    packaged = _HERE / "templates"
    if packaged.is_dir():
        return packaged
    return _HERE.parent / "templates"


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system tells it)."""
    return len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
