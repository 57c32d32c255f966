"""The settings a build reads, as one small frozen record made once from the config.

:class:`BuildSettings` holds the ``site.*``, ``cache.*``, ``data.*`` and build-wide
``analysis.*``/``trends.*`` settings a build wires its stages with (a stage that reads
its own slice, such as :class:`sitegen.analysis.params.AnalysisParams`, keeps it), with
the folder checks every command that writes or reads the site makes.
"""
from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

from . import config as config_mod
from .config import Config
from .errors import ConfigError
from .model import Finding
from .resources import default_templates_dir

#: The data settings, each a file or folder a build reads.
DATA_KEYS = ("data.deck_cards", "data.decks", "data.cards", "data.decklists", "data.parquet_folder", "data.matches")
#: The column settings ``sitegen classify`` reads its tables with.
CLASSIFY_COLUMNS = ("deck_id", "leader", "season", "card", "quantity")


@dataclass(frozen=True)
class BuildSettings:
    """What a build needs of the config, typed (see the setting of each field's name in
    sitegen.config: ``cache_folder`` is ``cache.folder``, ``by_leader`` ``analysis.by_leader``)."""

    root: Path
    source: Path | None
    output: Path | None
    output_text: str
    cache_folder: Path | None
    content: Path | None
    templates: Path | None
    data: tuple[tuple[str, Path], ...]
    card_table: Path | None
    matches: Path | None
    workers: int
    scheduler: str
    by_leader: bool
    link_threshold: float
    trends_min_games: int
    columns: tuple[tuple[str, str], ...]
    #: Every setting as one canonical text (what stamps and season records digest).
    values_json: str
    retired: tuple[str, ...]

    @classmethod
    def from_config(cls, cfg: Config) -> "BuildSettings":
        return cls(
            root=cfg.root, source=cfg.source, output=cfg.path("site.output"), output_text=str(cfg["site.output"]),
            cache_folder=cfg.path("cache.folder"), content=cfg.path("site.content"), templates=cfg.path("site.templates"),
            data=tuple((key, path) for key in DATA_KEYS if (path := cfg.path(key)) is not None),
            card_table=cfg.path("data.cards"), matches=cfg.path("data.matches"),
            workers=int(cfg["analysis.workers"]), scheduler=str(cfg["analysis.scheduler"]),
            by_leader=bool(cfg["analysis.by_leader"]), link_threshold=float(cfg["analysis.link_threshold"]),
            trends_min_games=int(cfg["trends.min_games"]),
            columns=tuple((name, str(cfg[f"columns.{name}"])) for name in CLASSIFY_COLUMNS),
            values_json=json.dumps(cfg.values, sort_keys=True, default=str), retired=tuple(cfg.retired),
        )

    @property
    def notes_folder(self) -> Path:
        """The analysts' notes: site.content, else ``content`` beside the config."""
        return self.content if self.content is not None else self.root / "content"

    @property
    def templates_dirs(self) -> tuple[Path, ...]:
        """The site's own templates folder (if any) first, then the packaged defaults."""
        dirs: list[Path] = []
        default = default_templates_dir().resolve()
        if self.templates is not None and self.templates.is_dir() and self.templates.resolve() != default:
            dirs.append(self.templates)
        dirs.append(default)
        return tuple(dirs)

    @property
    def input_roots(self) -> tuple[Path, ...]:
        """Every file or folder a build reads: data, notes, templates and sitegen's own program."""
        roots = [path for _, path in self.data]
        if self.content is not None:
            roots.append(self.content)
        return (*roots, *self.templates_dirs, Path(__file__).resolve().parent)

    def output_dir(self, override: Path | str | None = None) -> Path:
        """Where the site goes: the command line's folder, else site.output beside the config
        (as spelled: see :meth:`checked_output` for the folder a build writes)."""
        if override is not None:
            if not str(override).strip():
                raise ConfigError("command line", "-o", "the output folder is empty (it would mean the current folder)",
                                  "give -o a folder of its own, such as -o site")
            return Path(override).absolute()
        if self.output is None:
            raise ConfigError(self.source or "<config>", "site.output",
                              "is empty (it would mean the config's own folder)",
                              'set it to a folder of its own, such as output = "site"')
        return self.output.absolute()

    def retired_findings(self) -> tuple[Finding, ...]:
        """A warning for each retired setting the config still gives (they are read no more)."""
        return tuple(Finding("setting-retired",
                             f"setting '{key}' is no longer used: {config_mod.RETIRED[key]}; remove it from the config")
                     for key in self.retired)

    def checked_output(self, override: Path | str | None = None) -> tuple[Path, bool]:
        """The real folder a build writes (symbolic links followed), after refusing one it must
        not replace (see :func:`sitegen.writing.check_output`); and whether it is a folder an
        earlier sitegen wrote before it marked its folders. Reads no data."""
        from .reuse.last_build import LastBuild
        from .writing import check_output

        out = self.output_dir(override)
        where = str(self.source) if self.source is not None else "the config"
        if override is not None:
            setting, given = "-o", str(override)
            fix = "give -o a folder of its own that sitegen may replace, such as -o site"
        else:
            setting, given = "site.output", self.output_text
            fix = f'set site.output in {where} to a folder of its own that sitegen may replace, such as output = "site"'
        protected = [(f"the data of {key}", path) for key, path in self.data]
        for path, what in ((self.content, "the notes folder of site.content"),
                           (self.templates, "the templates folder of site.templates"),
                           (self.cache_folder, "the cache folder of cache.folder")):
            if path is not None:
                protected.append((what, path))
        protected.append(("sitegen's own program files", Path(__file__).resolve().parent))
        return check_output(out, setting=setting, given=given, fix=fix, config_dir=self.root,
                            protected=protected, known_files=LastBuild(self.cache_folder).known_output())

