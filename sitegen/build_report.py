"""What a build did, for the one-screen summary and for the next build's no-op answer."""
from __future__ import annotations

from dataclasses import asdict, dataclass, field
from pathlib import Path

from .model import Finding, RunReport
from .writing import WriteReport


@dataclass(frozen=True)
class BuildReport:
    """What a build did, for the one-screen summary."""

    output: Path
    decks: int
    seasons: int
    leaders: int
    archetypes: int
    partitions: int
    run: RunReport
    written: WriteReport
    warnings: tuple[Finding, ...] = ()
    seconds: float = 0.0
    timings: dict[str, float] = field(default_factory=dict)
    #: Seasons whose rows of the assignments files were copied from the last build's files.
    copied_blocks: int = 0
    #: Pages whose context was unchanged, taken from the last build's files instead of rendered.
    reused_pages: int = 0

    def summary(self) -> str:
        w = self.written
        lines = [
            f"Read {self.decks:,} decks in {self.seasons} season(s) and {self.leaders} leader(s).",
            f"Found {self.archetypes} archetype(s) in {self.partitions} partition(s): "
            f"{len(self.run.analysed)} analysed, {len(self.run.cached)} from the cache.",
            f"Wrote {w.files} files ({w.changed} new or changed, {w.removed} removed) in {self.seconds:.1f} s.",
        ]
        if self.warnings:
            lines.append(f"{len(self.warnings)} warning(s):")
            by_kind: dict[str, list[Finding]] = {}
            for f in self.warnings:
                by_kind.setdefault(f.kind, []).append(f)
            for kind, items in sorted(by_kind.items()):
                lines.append(f"  {kind}: {len(items)} — e.g. {items[0].message}")
        lines.append(f"The site is in {self.output}")
        return "\n".join(lines)

    def to_record(self) -> dict:
        """The report as the last-build record keeps it (see :meth:`from_record`)."""
        return {"decks": self.decks, "seasons": self.seasons, "leaders": self.leaders,
                "archetypes": self.archetypes, "partitions": self.partitions,
                "partition_keys": [list(k) for k in self.run.analysed + self.run.cached],
                "files": self.written.files, "warnings": [asdict(w) for w in self.warnings]}

    @classmethod
    def from_record(cls, out: Path, r: dict) -> "BuildReport | None":
        """The report of a build whose output is unchanged (everything counted as cached), or
        None when the record is not one :meth:`to_record` made."""
        try:
            return cls(output=out, decks=r["decks"], seasons=r["seasons"], leaders=r["leaders"],
                       archetypes=r["archetypes"], partitions=r["partitions"],
                       run=RunReport(analysed=(), cached=tuple(tuple(k) for k in r["partition_keys"])),
                       written=WriteReport(files=r["files"], changed=0, removed=0),
                       warnings=tuple(Finding(**w) for w in r["warnings"]))
        except (KeyError, TypeError, ValueError):
            return None
