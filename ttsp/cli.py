"""The ``ttsp`` command line: thin shells that parse, call one workflow function, and write.

Exit codes (every command): 0 done; 2 bad input or usage (one line on stderr naming file,
column and row; no traceback); 3 a check failed under ``--strict``; 1 an internal error.
"""

from __future__ import annotations

import sys
import traceback
from functools import wraps
from pathlib import Path
from typing import List, Optional

import typer

from . import __version__
from .exceptions import TtspError

app = typer.Typer(add_completion=False, no_args_is_help=True,
                  help="Time–temperature superposition: master curves, shift laws, Prony series.")

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_CHECK_FAILED = 0, 1, 2, 3
_state = {"debug": False}


def _say_error(message: str) -> None:
    typer.echo(f"ttsp: error: {message}", err=True)


def guarded(func):
    """Turn ttsp's errors into one stderr line and an exit code; never show a traceback for bad
    input. Internal errors print one line asking for a report (traceback only with --debug)."""

    @wraps(func)
    def wrapper(*args, **kwargs):
        try:
            return func(*args, **kwargs)
        except typer.Exit:
            raise
        except TtspError as exc:
            _say_error(str(exc).splitlines()[0] if str(exc) else type(exc).__name__)
            raise typer.Exit(EXIT_BAD_INPUT) from None
        except (FileNotFoundError, IsADirectoryError, PermissionError) as exc:
            _say_error(f"{exc.filename}: {exc.strerror}")
            raise typer.Exit(EXIT_BAD_INPUT) from None
        except KeyboardInterrupt:
            _say_error("interrupted")
            raise typer.Exit(130) from None
        except Exception as exc:  # an internal error: ask for a report
            if _state["debug"]:
                traceback.print_exc()
            _say_error(f"internal error ({type(exc).__name__}: {exc}); please report it with the "
                       f"command you ran (rerun with --debug for the traceback)")
            raise typer.Exit(EXIT_INTERNAL) from None

    return wrapper


def _version_callback(value: bool):
    if value:
        typer.echo(f"ttsp {__version__}")
        raise typer.Exit()


@app.callback()
def _root(version: bool = typer.Option(False, "--version", callback=_version_callback,
                                       is_eager=True, help="Print the version and exit."),
          debug: bool = typer.Option(False, "--debug", help="Show tracebacks of internal errors.")):
    _state["debug"] = debug


def parse_pairs(values: Optional[List[str]], option: str) -> dict:
    """Parse repeated ``NAME=VALUE`` options into a dict (usage error on a malformed one)."""
    out = {}
    for item in values or []:
        if "=" not in item:
            raise typer.BadParameter(f"must look like NAME=VALUE; got {item!r}", param_hint=option)
        k, v = item.split("=", 1)
        out[k.strip()] = v.strip()
    return out


# Options shared by every command that reads a campaign
COLUMN_OPT = typer.Option(None, "--column", "-c", metavar="HEADER=ROLE",
                          help="Map a header to a role (e.g. 'Mod1=storage_modulus_Pa'); repeatable.")
UNIT_OPT = typer.Option(None, "--unit", "-u", metavar="HEADER=UNIT",
                        help="Override a unit by header or role (e.g. 'Mod1=MPa'); repeatable.")
SHEET_OPT = typer.Option(None, "--sheet", help="Sheet of an .xlsx workbook (default: the first).")
TOL_OPT = typer.Option(0.5, "--temperature-tolerance", min=0.0,
                       help="Points within this many kelvin form one isotherm.")
KIND_OPT = typer.Option(None, "--modulus-kind", help="tensile or shear (default: from the headers).")


def read_inputs(inputs, column, unit, sheet, tolerance, modulus_kind):
    from .io.readers import read_campaign

    if modulus_kind not in (None, "tensile", "shear"):
        raise typer.BadParameter("must be tensile or shear", param_hint="--modulus-kind")
    return read_campaign([str(p) for p in inputs], columns=parse_pairs(column, "--column"),
                         units=parse_pairs(unit, "--unit"), sheet=sheet,
                         temperature_tolerance_K=tolerance, modulus_kind=modulus_kind)


def describe(campaign) -> str:
    """A plain-text account of what the reader understood."""
    lines = [f"source: {campaign.source}",
             f"domain: {campaign.domain}   modulus kind: {campaign.modulus_kind}   "
             f"isotherms: {len(campaign)}   points: {campaign.n_points}",
             "functions: " + ", ".join(f"{campaign.symbol(q)} ({q})" for q in campaign.quantities),
             "units as read: " + ", ".join(f"{k} -> {v}" for k, v in campaign.units_as_read.items())]
    if campaign.metadata.get("assumed units"):
        lines.append(f"assumed units (no unit in the header): {campaign.metadata['assumed units']}")
    if campaign.dropped_rows:
        lines.append("rows left out: " + ", ".join(f"{v} {k}" for k, v in campaign.dropped_rows.items()))
    x = "frequency (Hz)" if campaign.domain == "frequency" else "time (s)"
    lines.append(f"{'T (°C)':>9}  {'points':>6}  {x + ' from':>20}  {'to':>10}")
    import math

    for iso in campaign.isotherms:
        lo, hi = iso.x[0], iso.x[-1]
        if campaign.domain == "frequency":
            lo, hi = lo / (2 * math.pi), hi / (2 * math.pi)
        lines.append(f"{iso.temperature_C:9.2f}  {iso.n_points:6d}  {lo:20.4g}  {hi:10.4g}")
    return "\n".join(lines)


@app.command("inspect")
@guarded
def inspect_cmd(inputs: List[Path] = typer.Argument(..., help="Files or folders of one campaign."),
                column: Optional[List[str]] = COLUMN_OPT, unit: Optional[List[str]] = UNIT_OPT,
                sheet: Optional[str] = SHEET_OPT, tolerance: float = TOL_OPT,
                modulus_kind: Optional[str] = KIND_OPT):
    """Show what the reader understood (isotherms, ranges, units, dropped rows), fitting nothing."""
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        campaign = read_inputs(inputs, column, unit, sheet, tolerance, modulus_kind)
    typer.echo(describe(campaign))


def main():  # console-script entry point
    app(prog_name="ttsp")


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
