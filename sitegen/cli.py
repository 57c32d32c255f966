"""The ``sitegen`` command: build, serve, new.

Every :class:`~sitegen.errors.SitegenError` becomes one line per problem on
stderr and exit code 1 (2 for wrong usage); a build that fails writes nothing.
"""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from .errors import DataErrors, SitegenError

EXIT_ERROR = 1


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="sitegen",
        description="Publish a card game's archetype guide as a static website from deck data.",
    )
    p.add_argument("--version", action="version", version=f"sitegen {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", required=True)

    b = sub.add_parser("build", help="analyse the decks and write the site",
                       description="Read the deck data named in the config, find the archetypes of every season "
                                   "and leader, and write the whole site (only changed partitions are re-analysed).")
    b.add_argument("config", nargs="?", default="site.toml", help="site config file (default: site.toml)")
    b.add_argument("-o", "--output", help="output folder (default: site.output of the config)")
    b.add_argument("-q", "--quiet", action="store_true", help="print nothing but errors")
    b.add_argument("--workers", type=int, help="worker processes for the analyses (default: analysis.workers, 0 = every core)")
    b.add_argument("--scheduler", metavar="ADDRESS", help="send the analyses to this Dask scheduler (needs sitegen[dask])")

    s = sub.add_parser("serve", help="preview the built site on this machine",
                       description="Serve the built site on http://127.0.0.1:PORT/ for preview. Never serves files "
                                   "outside the site folder.")
    s.add_argument("target", nargs="?", default="site.toml", help="site config file or a built site folder (default: site.toml)")
    s.add_argument("-p", "--port", type=int, default=8000, help="port (default 8000; 0 picks a free one)")
    s.add_argument("--host", default="127.0.0.1", help="address to bind (default 127.0.0.1, this machine only)")
    s.add_argument("--watch", action="store_true",
                   help="rebuild when the config, data, notes or templates change, and reload open pages")
    s.add_argument("-q", "--quiet", action="store_true", help="do not log requests")

    c = sub.add_parser("classify", help="place decklists in the last build's archetypes",
                       description="Place each decklist in an archetype by the rule of the last build (its models in "
                                   "the site folder; nothing is analysed again): print its archetype, distance and "
                                   "nearest alternative.")
    c.add_argument("config", help="site config file (its site.output holds the last build)")
    c.add_argument("lists", nargs="*", metavar="LIST", help="text decklists (the README's format) or folders of them")
    c.add_argument("--decks", help="a deck table (deck id, leader, optional season), with --cards")
    c.add_argument("--cards", help="a long-form table (deck id, card, quantity), with --decks")
    c.add_argument("--season", help="place every list in this season (default: a list's Season line, else the latest)")
    c.add_argument("--leader", help="the leader of every list (default: each list's Leader line)")
    c.add_argument("--format", choices=("text", "csv", "json"), default="text", help="output format (default text)")

    n = sub.add_parser("new", help="start a site project in a new folder",
                       description="Make DIR with a commented site.toml, a small sample of invented deck data, "
                                   "content/ for notes and templates/ for overrides.")
    n.add_argument("dir", help="folder to create (must not exist or be empty)")
    return p


def _fail(exc: SitegenError) -> int:
    if isinstance(exc, DataErrors):
        for line in exc.lines(20):
            print(f"error: {line}", file=sys.stderr)
    else:
        print(f"error: {exc}", file=sys.stderr)
    return EXIT_ERROR


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    try:
        if args.command == "build":
            from .build import build

            report = build(args.config, output=args.output, quiet=args.quiet,
                           workers=args.workers, scheduler=args.scheduler)
            if not args.quiet:
                print(report.summary())
        elif args.command == "serve":
            from .serve import serve

            serve(Path(args.target), host=args.host, port=args.port, watch=args.watch, quiet=args.quiet)
        elif args.command == "classify":
            from .classify import classify

            sys.stdout.write(classify(args.config, [Path(x) for x in args.lists], decks=args.decks, cards=args.cards,
                                      season=args.season, leader=args.leader, fmt=args.format))
        elif args.command == "new":
            from .scaffold import new_site

            made = new_site(Path(args.dir))
            print(f"Made a site project in {made}.\nNext: sitegen build {made / 'site.toml'}")
    except SitegenError as exc:
        return _fail(exc)
    except KeyboardInterrupt:
        print("stopped", file=sys.stderr)
        return 130
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
