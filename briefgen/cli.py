"""Command line: ``briefgen build``, ``check``, ``init`` and ``demo``.

The only place that prints, colours output and turns errors into exit codes.
"""

from __future__ import annotations

import argparse
import logging
import sys
import time
from importlib import resources
from pathlib import Path

from rich.console import Console

from briefgen import __version__
from briefgen.config import load_spec
from briefgen.errors import BriefError

EXIT_INTERNAL = 70
EXIT_INTERRUPTED = 130


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="briefgen", description="Turn a dataset and a YAML config into a PDF and HTML brief."
    )
    parser.add_argument("--version", action="version", version=f"briefgen {__version__}")
    parser.add_argument("--verbose", action="store_true", help="log each stage")
    parser.add_argument("--debug", action="store_true", help="show tracebacks of internal errors")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    build = commands.add_parser("build", help="build the brief a config describes")
    build.add_argument("config", type=Path, help="YAML config file")
    build.add_argument("--out", type=Path, help="output folder (overrides output.dir)")
    check = commands.add_parser(
        "check", help="validate a config and its data columns, build nothing"
    )
    check.add_argument("config", type=Path)
    init = commands.add_parser("init", help="propose a config from a data file's columns")
    init.add_argument("data", type=Path, help="CSV or Parquet file")
    init.add_argument(
        "--config", type=Path, default=Path("brief.yaml"), help="file to write (default brief.yaml)"
    )
    init.add_argument("--title", help="the brief's title")
    init.add_argument("--force", action="store_true", help="overwrite an existing config")
    demo = commands.add_parser("demo", help="build the demo brief from the invented courier data")
    demo.add_argument(
        "--out", type=Path, default=Path("out/demo"), help="output folder (default out/demo)"
    )
    return parser


def demo_config_path() -> Path:
    """The packaged demo config; works from an installed package, no repository needed."""
    return Path(str(resources.files("briefgen").joinpath("demo/demo.yaml")))


def _build(config: Path, out: Path | None, console: Console) -> None:
    from briefgen.pipeline import build_brief

    started = time.perf_counter()
    spec = load_spec(config)
    result = build_brief(spec, out)
    seconds = time.perf_counter() - started
    for path in result.files:
        console.print(f"  wrote {path} ({path.stat().st_size / 1024:,.0f} KiB)")
    console.print(
        f"[green]brief built[/green] in {seconds:.1f} s from {result.stats.accounting.rows_read:,} rows"
    )


def _check(config: Path, console: Console) -> None:
    from briefgen.source import open_source

    spec = load_spec(config)
    source = open_source(spec)
    console.print(f"[green]ok[/green]: {config} is valid and {source.label} has every named column")


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    logging.basicConfig(
        level=logging.INFO if args.verbose else logging.WARNING, format="%(name)s: %(message)s"
    )
    console = Console(stderr=False, highlight=False)
    errors = Console(stderr=True, highlight=False)
    try:
        if args.command == "build":
            _build(args.config, args.out, console)
        elif args.command == "check":
            _check(args.config, console)
        elif args.command == "init":
            from briefgen.starter import write_starter

            path = write_starter(args.data, args.config, args.title, args.force)
            console.print(f"[green]wrote[/green] {path}; check it, then run: briefgen build {path}")
        elif args.command == "demo":
            _build(demo_config_path(), args.out, console)
    except BriefError as exc:
        errors.print(f"[bold red]error:[/bold red] {exc}", markup=True, soft_wrap=True)
        return exc.exit_code
    except KeyboardInterrupt:
        errors.print("interrupted; the previous brief is unchanged.")
        return EXIT_INTERRUPTED
    except Exception as exc:  # noqa: BLE001 - last line of defence: one sentence, no traceback
        if args.debug:
            raise
        errors.print(
            f"[bold red]internal error:[/bold red] {type(exc).__name__}: {exc}. The previous brief is "
            "unchanged; rerun with --debug and report the traceback.",
            soft_wrap=True,
        )
        return EXIT_INTERNAL
    return 0


if __name__ == "__main__":
    sys.exit(main())
