"""The ``ttsp`` command line: thin shells that parse, call one workflow function, and write.

Exit codes (every command): 0 done; 2 bad input or usage (one line on stderr naming file,
column and row; no traceback); 3 a check failed under ``--strict``; 1 an internal error.
"""

from __future__ import annotations

import atexit
import errno
import gc
import json
import re
import sys
import traceback
import warnings
from contextlib import contextmanager
from dataclasses import replace
from enum import Enum
from functools import wraps
from pathlib import Path

import typer

from . import __version__, _help_words
from ._validation import printable
from .exceptions import DataError, OptionValueError, TtspError
from .io.reading_account import describe_campaign
from .laws.names import LAW_MODELS
from .runner import read_inputs, run_build

_help_words.apply()
# plain help: rich's option table cuts long option names at 80 columns
app = typer.Typer(add_completion=False, no_args_is_help=True, rich_markup_mode=None,
                  help="Time–temperature superposition: master curves, shift laws, Prony series.")

EXIT_OK, EXIT_INTERNAL, EXIT_BAD_INPUT, EXIT_CHECK_FAILED = 0, 1, 2, 3
_state = {"debug": False}


def _say_error(message: str) -> None:
    typer.echo(f"ttsp: error: {message}", err=True)


# Errors of the user's machine rather than of ttsp: a full disk or quota, a read-only file
# system, a file too large for the file system (exit 2 with the path, not an internal error)
_ENVIRONMENT_ERRNOS = {errno.ENOSPC, errno.EDQUOT, errno.EROFS, errno.EFBIG, errno.EACCES,
                       errno.EPERM}
# a temporary output folder of ttsp.io.atomic: .ttsp-tmp-<destination>.<pid>.<random>
_TEMPORARY_FOLDER = re.compile(r"^\.ttsp-tmp-(?P<destination>.+)\.\d+\.[^.]+$")


def _os_error_message(exc: OSError) -> str:
    """``<path>: <reason>`` naming the user's path: the output folder rather than the temporary
    folder ttsp writes beside it."""
    if exc.filename is None:
        return printable(f"{exc.strerror or exc}")
    path = Path(str(exc.filename))
    m = _TEMPORARY_FOLDER.match(path.name)
    if m is None:
        return printable(f"{exc.filename}: {exc.strerror}")
    return printable(f"{path.parent / m.group('destination')}: {exc.strerror} (while writing "
                     f"the output folder in {path.parent})")


@contextmanager
def _writing_to(path):
    """Name ``path`` in an OSError that names no file (a full disk while writing a file)."""
    try:
        yield
    except OSError as exc:
        if exc.filename is None and exc.errno is not None:
            raise OSError(exc.errno, exc.strerror, str(path)) from None
        raise


def guarded(func):
    """Turn ttsp's errors into one stderr line and an exit code; never show a traceback for bad
    input. Internal errors print one line asking for a report (traceback only with --debug)."""

    @wraps(func)
    def wrapper(*args, **kwargs):
        try:
            return func(*args, **kwargs)
        except typer.Exit:
            raise
        except OptionValueError as exc:   # a bad option value: typer's usage error for it
            raise typer.BadParameter(exc.reason, param_hint=exc.option) from None
        except TtspError as exc:
            # one line: a newline (from a file name, say) is shown escaped, never cut at
            _say_error(printable(str(exc)) if str(exc) else type(exc).__name__)
            raise typer.Exit(EXIT_BAD_INPUT) from None
        except (FileNotFoundError, IsADirectoryError, PermissionError) as exc:
            _say_error(_os_error_message(exc))
            raise typer.Exit(EXIT_BAD_INPUT) from None
        except OSError as exc:
            if exc.errno not in _ENVIRONMENT_ERRNOS:
                raise
            _say_error(_os_error_message(exc))
            raise typer.Exit(EXIT_BAD_INPUT) from None
        except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM (ttsp._lifetime.Terminated)
            _say_error(str(exc) or "interrupted")
            raise typer.Exit(getattr(exc, "exit_code", 130)) from None
        except MemoryError:
            _say_error("the campaign is too large for this machine's memory; split it, or thin "
                       "each isotherm to fewer points")
            raise typer.Exit(EXIT_BAD_INPUT) from None
        except Exception as exc:  # an internal error: ask for a report
            if hasattr(exc, "format_message") and isinstance(getattr(exc, "exit_code", None), int):
                raise  # a usage error of the command-line framework: main() reports it
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


# Options shared by every command that reads a campaign
COLUMN_OPT = typer.Option(None, "--column", "-c", metavar="HEADER=ROLE",
                          help="Map a header to a role (e.g. 'Mod1=storage_modulus_Pa'); repeatable.")
UNIT_OPT = typer.Option(None, "--unit", "-u", metavar="HEADER=UNIT",
                        help="Override a unit by header or role (e.g. 'Mod1=MPa'); repeatable.")
SHEET_OPT = typer.Option(None, "--sheet", help="Sheet of an .xlsx workbook (default: the first).")
TOL_OPT = typer.Option(0.5, "--temperature-tolerance", min=0.0,
                       help="Points within this many kelvin form one isotherm.")
KIND_OPT = typer.Option(None, "--modulus-kind", help="tensile or shear (default: from the headers).")
NAME_T_OPT = typer.Option(False, "--temperature-from-name",
                          help="Read a file name's one unitless number (sweep_130.csv) as °C.")
REPEATS_OPT = typer.Option("merge", "--repeats",
                           help="Repeated time stamps in an isotherm: merge (mean in log) or refuse.")


@app.command("inspect")
@guarded
def inspect_cmd(inputs: list[Path] = typer.Argument(..., help="Files or folders of one campaign."),
                column: list[str] | None = COLUMN_OPT, unit: list[str] | None = UNIT_OPT,
                sheet: str | None = SHEET_OPT, tolerance: float = TOL_OPT,
                modulus_kind: str | None = KIND_OPT,
                temperature_from_name: bool = NAME_T_OPT, repeats: str = REPEATS_OPT):
    """Show what the reader understood (isotherms, ranges, units, dropped rows), fitting nothing."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        campaign = read_inputs(inputs, column, unit, sheet, tolerance, modulus_kind,
                               temperature_from_name, repeats)
    typer.echo(describe_campaign(campaign))



# --law's choices, from the laws' one list of names (member wlf_arrhenius = "wlf-arrhenius")
# (mypy cannot read members made at run time: they are looked up by name, Law["auto"])
Law = Enum("Law", {m.replace("-", "_"): m for m in ("auto",) + LAW_MODELS}, type=str)  # type: ignore[misc]


VERTICAL_HELP = ("Vertical shift b_T: none, density (needs --expansion-coefficient), fit, or "
                 "auto (each built, the one that predicts held-out isotherms best kept).")


class Vertical(str, Enum):
    none = "none"
    density = "density"
    fit = "fit"
    auto = "auto"


class ShiftOn(str, Enum):
    auto = "auto"
    tan_delta = "tan_delta"


class Gaps(str, Enum):
    stop = "stop"
    bridge = "bridge"


class MasterCurve(str, Enum):
    auto = "auto"
    spectrum = "spectrum"
    splines = "splines"


class Material(str, Enum):
    solid = "solid"
    liquid = "liquid"


class Units(str, Enum):
    SI = "SI"
    engineering = "engineering"


class Quantity(str, Enum):
    relaxation_modulus = "relaxation_modulus"
    creep_compliance = "creep_compliance"
    storage_modulus = "storage_modulus"
    loss_modulus = "loss_modulus"
    tan_delta = "tan_delta"


def _options(reference_temperature, law, vertical, expansion_coefficient, shift_on, gaps,
             prony_density, glass_transition, spectrum=False, master_curve=MasterCurve.auto,
             cross_validation=True, material=Material.solid, exclude=None, fix_shift=None,
             service_temperature=None, isochrone_frequency=None):
    from .workflow import BuildOptions

    return BuildOptions(reference_temperature_C=reference_temperature, law=law.value,
                        vertical=vertical.value, expansion_coefficient_per_K=expansion_coefficient,
                        shift_on=shift_on.value, gaps=gaps.value,
                        prony_terms_per_decade=prony_density, glass_transition_C=glass_transition,
                        spectrum=spectrum, master_curve=master_curve.value,
                        cross_validation=cross_validation, material=material.value,
                        exclude_C=tuple(exclude or ()),
                        fixed_log10_aT=tuple(_fixed_shifts(fix_shift).items()),
                        service_temperature_C=service_temperature,
                        isochrone_frequency_Hz=_one_frequency(isochrone_frequency))


def _one_frequency(text) -> float:
    """``--isochrone-frequency`` (``1``, ``10Hz``, ``0.1 kHz``) in Hz; 1 Hz when not given."""
    if text is None:
        return 1.0
    from .axis_text import FREQUENCY_UNITS_HZ, parse_axis

    try:
        values = parse_axis(text, FREQUENCY_UNITS_HZ)
    except ValueError as exc:
        raise typer.BadParameter(str(exc), param_hint="--isochrone-frequency") from None
    if values.size != 1:
        raise typer.BadParameter(f"must be one frequency; got {text!r}",
                                 param_hint="--isochrone-frequency")
    return float(values[0])


def _fixed_shifts(values) -> dict:
    """``--fix-shift T=LOG10_AT`` (repeatable; T in °C) as ``{T: log10 a_T}``."""
    from .runner import parse_pairs

    out = {}
    for t, v in parse_pairs(values, "--fix-shift").items():
        try:
            out[float(t)] = float(v)
        except ValueError:
            raise typer.BadParameter(f"must look like T=LOG10_AT with T in °C (for example "
                                     f"35=1.24); got {t}={v}", param_hint="--fix-shift") from None
    return out


def _check_lines(result) -> str:
    return "\n".join(f"{c.status.upper():5} {c.name}: {c.message}" for c in result.checks)


@app.command("build")
@guarded
def build_cmd(inputs: list[Path] = typer.Argument(..., help="Files or folders of one campaign."),
              reference_temperature: float | None = typer.Option(
                  None, "--reference-temperature", "-T",
                  help="Reference temperature in °C (default: the measured one nearest the median)."),
              law: Law = typer.Option(Law["auto"], "--law", help="Shift law to fit."),
              vertical: Vertical = typer.Option(Vertical.none, "--vertical", help=VERTICAL_HELP),
              expansion_coefficient: float | None = typer.Option(
                  None, "--expansion-coefficient",
                  help="Volumetric expansion coefficient in 1/K (for --vertical density)."),
              shift_on: ShiftOn = typer.Option(ShiftOn.auto, "--shift-on",
                                               help="Functions to shift on."),
              gaps: Gaps = typer.Option(Gaps.stop, "--gaps",
                                        help="stop at isotherms that do not overlap, or bridge them."),
              prony_density: float = typer.Option(2.0, "--prony-density",
                                                  help="Prony relaxation times per decade."),
              glass_transition: float | None = typer.Option(
                  None, "--glass-transition", help="Tg in °C for --law wlf-arrhenius (else fitted)."),
              spectrum: bool = typer.Option(
                  False, "--spectrum",
                  help="Also fit the continuous relaxation spectrum H(τ) (frequency data)."),
              master_curve: MasterCurve = typer.Option(
                  MasterCurve.auto, "--master-curve",
                  help="Model the shifts are fitted with: one shared relaxation spectrum, a "
                       "smooth curve per function, or auto (the one that lays neighbouring "
                       "isotherms better on each other)."),
              cross_validation: bool = typer.Option(
                  True, "--cross-validation/--no-cross-validation",
                  help="Predict interior isotherms from builds without them (the build's "
                       "own accuracy figure)."),
              material: Material = typer.Option(
                  Material.solid, "--material",
                  help="liquid (a melt: equilibrium modulus 0, creep with flow) or solid."),
              exclude: list[float] | None = typer.Option(
                  None, "--exclude", metavar="T",
                  help="Leave out the isotherm at T °C (within 0.5 K); repeatable."),
              fix_shift: list[str] | None = typer.Option(
                  None, "--fix-shift", metavar="T=LOG10_AT",
                  help="Hold the shift of the isotherm at T °C at log10 a_T (e.g. 35=1.24); "
                       "repeatable."),
              service_temperature: float | None = typer.Option(
                  None, "--service-temperature", metavar="T",
                  help="Also tabulate E(t), D(t), E', E'', tan δ at T °C "
                       "(service_functions.csv)."),
              isochrone_frequency: str | None = typer.Option(
                  None, "--isochrone-frequency", metavar="FREQ",
                  help="Frequency of the isochronal figure and its Tg readings (E' onset, "
                       "E'' peak, tan δ peak); units mHz, Hz, kHz.  [default: 1Hz]"),
              title: str | None = typer.Option(
                  None, "--title", help="Title of the report (default: the sample's name from "
                                        "the input's metadata, else its file name)."),
              units: Units = typer.Option(
                  Units.SI, "--units",
                  help="Units of the CSV tables: SI (Pa, 1/Pa) or engineering (MPa, 1/MPa); "
                       "frequencies in Hz either way."),
              out: Path = typer.Option(Path("ttsp-out"), "--out", "-o", help="Output folder."),
              force: bool = typer.Option(False, "--force", help="Replace an existing output folder."),
              no_figures: bool = typer.Option(False, "--no-figures",
                                              help="Numbers only: no figures, no HTML page."),
              strict: bool = typer.Option(False, "--strict", help="Exit 3 when a check fails."),
              quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress on stderr."),
              column: list[str] | None = COLUMN_OPT, unit: list[str] | None = UNIT_OPT,
              sheet: str | None = SHEET_OPT, tolerance: float = TOL_OPT,
              modulus_kind: str | None = KIND_OPT,
              temperature_from_name: bool = NAME_T_OPT, repeats: str = REPEATS_OPT):
    """Build the master curve, shift law, Prony series, material functions, checks and report."""
    options = _options(reference_temperature, law, vertical, expansion_coefficient, shift_on, gaps,
                       prony_density, glass_transition, spectrum, master_curve, cross_validation,
                       material, exclude, fix_shift, service_temperature, isochrone_frequency)
    with _writing_to(out):
        result, folder = run_build(inputs, options, out, figures=not no_figures, force=force,
                                   quiet=quiet, column=column, unit=unit, sheet=sheet,
                                   tolerance=tolerance, modulus_kind=modulus_kind,
                                   temperature_from_name=temperature_from_name,
                                   repeats=repeats, title=title, units=units.value)
    _say_built(result, folder / ("report.html" if not no_figures else "summary.json"),
               spectrum_asked=spectrum, strict=strict)


def _say_built(result, written: Path, *, spectrum_asked: bool, strict: bool) -> None:
    """After a build: the main file written, the terminal summary, a spectrum that could not be
    fitted, and exit 3 under --strict when a check failed."""
    typer.echo(str(written))
    from .terminal import build_summary_lines

    typer.echo("\n".join(build_summary_lines(result)))
    if spectrum_asked and result.relaxation_spectrum is None:
        why = next((w for w in result.warnings if "continuous relaxation spectrum" in w),
                   "the continuous relaxation spectrum was not fitted")
        typer.echo(f"ttsp: no relaxation_spectrum.csv: {why}", err=True)
    if strict and result.failed_checks:
        typer.echo("ttsp: a check failed (--strict): " +
                   ", ".join(c.name for c in result.failed_checks), err=True)
        raise typer.Exit(EXIT_CHECK_FAILED)


def demo_input() -> Path:
    """The bundled invented demo campaign (a DMA campaign on a damping elastomer)."""
    return Path(__file__).resolve().parent / "demo_data" / "damping_elastomer_dma.csv"


@app.command("demo")
@guarded
def demo_cmd(out: Path = typer.Option(Path("ttsp-demo"), "--out", "-o", help="Output folder."),
             quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress on stderr.")):
    """Build the bundled (invented) demo campaign and print where the report is."""
    from .workflow import BuildOptions

    # a previous demo output is replaced, under the rules of every output folder (only what
    # ttsp wrote there, nothing the user added; see ttsp.io.atomic); anything else is refused
    with _writing_to(Path(out)):
        result, folder = run_build([demo_input()], BuildOptions(), Path(out), figures=True,
                                   force=True, quiet=quiet, kind="demo", replaces=("demo",))
    typer.echo(f"ttsp demo: {len(result.campaign)} isotherms of an invented damping elastomer; "
               f"master curve at {result.reference_temperature_C:.1f} °C, law "
               f"{result.law_fit.law.model}, {result.series.n_terms} Prony terms.")
    typer.echo(f"report: {(folder / 'report.html').resolve()}")


@app.command("check")
@guarded
def check_cmd(inputs: list[Path] = typer.Argument(..., help="Files or folders of one campaign."),
              reference_temperature: float | None = typer.Option(
                  None, "--reference-temperature", "-T", help="Reference temperature in °C."),
              law: Law = typer.Option(Law["auto"], "--law", help="Shift law to fit."),
              vertical: Vertical = typer.Option(Vertical.none, "--vertical", help=VERTICAL_HELP),
              expansion_coefficient: float | None = typer.Option(
                  None, "--expansion-coefficient",
                  help="Volumetric expansion coefficient in 1/K (for --vertical density)."),
              shift_on: ShiftOn = typer.Option(ShiftOn.auto, "--shift-on",
                                               help="Functions to shift on."),
              gaps: Gaps = typer.Option(Gaps.stop, "--gaps",
                                        help="stop at isotherms that do not overlap, or bridge them."),
              glass_transition: float | None = typer.Option(
                  None, "--glass-transition", help="Tg in °C for --law wlf-arrhenius (else fitted)."),
              master_curve: MasterCurve = typer.Option(
                  MasterCurve.auto, "--master-curve",
                  help="Model the shifts are fitted with (as for build)."),
              strict: bool = typer.Option(False, "--strict", help="Exit 3 when a check fails."),
              as_json: bool = typer.Option(False, "--json", help="Print the checks as JSON."),
              column: list[str] | None = COLUMN_OPT, unit: list[str] | None = UNIT_OPT,
              sheet: str | None = SHEET_OPT, tolerance: float = TOL_OPT,
              modulus_kind: str | None = KIND_OPT,
              temperature_from_name: bool = NAME_T_OPT, repeats: str = REPEATS_OPT):
    """Does superposition hold? Run the checks and print a verdict for each.

    Every build option that changes what is checked (the law, the vertical shift, the functions
    shifted on, bridging of gaps, the master-curve model) is taken as for ``ttsp build``; the
    build runs without cross-validation, which no check uses.
    """
    from .workflow import build

    options = replace(_options(reference_temperature, law, vertical, expansion_coefficient,
                               shift_on, gaps, 2.0, glass_transition, False, master_curve,
                               cross_validation=False), bands=False)   # no check uses either
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        campaign = read_inputs(inputs, column, unit, sheet, tolerance, modulus_kind,
                               temperature_from_name, repeats)
        result = build(campaign, options)
    if as_json:
        from .io.writers import summary_to_json_text

        typer.echo(summary_to_json_text({"checks": [c.to_dict() for c in result.checks]}).rstrip())
    else:
        typer.echo(_check_lines(result))
    if strict and result.failed_checks:
        raise typer.Exit(EXIT_CHECK_FAILED)


def _emit_table(frame, out, caught_warnings) -> None:
    """Warnings once each on stderr; the table as CSV on stdout, or atomically into ``out``."""
    from .io.atomic import write_text_atomic
    from .io.writers import frame_to_csv_text

    for w in dict.fromkeys(str(w.message) for w in caught_warnings
                           if issubclass(w.category, UserWarning)):
        typer.echo(f"ttsp: warning: {w}", err=True)
    text = frame_to_csv_text(frame)
    if out is None:
        typer.echo(text, nl=False)
    else:
        with _writing_to(out):
            write_text_atomic(out, text)
        typer.echo(str(out), err=True)


def parse_grid(text: str, option: str):
    """``a:b:n`` -> n log-spaced values from a to b (both > 0, n >= 1)."""
    import numpy as np

    parts = text.split(":")
    try:
        if len(parts) != 3:
            raise ValueError
        a, b, n = float(parts[0]), float(parts[1]), int(parts[2])
    except ValueError:
        raise typer.BadParameter(f"must look like a:b:n (for example 1:1e6:50); got {text!r}",
                                 param_hint=option) from None
    if not (a > 0 and b > 0 and n >= 1) or not (np.isfinite(a) and np.isfinite(b)) or n > 1_000_000:
        raise typer.BadParameter(f"needs a > 0, b > 0 and 1 <= n <= 1000000; got {text!r}",
                                 param_hint=option)
    return np.logspace(np.log10(a), np.log10(b), n) if n > 1 else np.array([a])


def load_model(path: Path):
    """Read the model that ``ttsp build`` wrote (its summary.json, or the folder holding it)."""
    from .model import ViscoelasticModel

    path = Path(path)
    file = path / "summary.json" if path.is_dir() else path
    if not file.is_file():
        raise typer.BadParameter(f"{path}: no summary.json here; give a 'ttsp build' output",
                                 param_hint="MODEL")
    try:
        summary = json.loads(file.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise DataError(f"{file}: not a ttsp summary (invalid JSON: {exc})") from None
    except RecursionError:
        raise DataError(f"{file}: not a ttsp summary (JSON nested deeper than Python's "
                        f"recursion limit of {sys.getrecursionlimit()})") from None
    if not isinstance(summary, dict) or summary.get("schema_version") != "1":
        raise DataError(f"{file}: not a ttsp summary of schema version 1")
    try:
        return ViscoelasticModel.from_summary(summary)
    except DataError as exc:   # say which file the broken section is in
        raise DataError(f"{file}: {exc}") from None


def _temperature_messages(law, temperature_C: float, tolerance_K: float):
    """Refuse a temperature at or below the law's divergence, and word the range warning, in °C.

    The law's valid range runs between the mean temperatures of its outer isotherms; a
    temperature within ``tolerance_K`` of an end (the tolerance that grouped the points into
    isotherms) belongs to that isotherm and is not an extrapolation. Returns the warning or None.
    """
    t_K = temperature_C + 273.15
    limit_of = getattr(law, "_lower_limit_K", None)
    limit_K = None if limit_of is None else limit_of(law.params, law.reference_temperature_K)
    if limit_K is not None and t_K <= limit_K:
        name = getattr(law, "_limit_name", "the law's divergence").replace(" - ", " − ")
        raise DataError(f"--temperature must be above {name} of the model's shift law, "
                        f"{limit_K - 273.15:.2f} °C, where a_T has no value; got "
                        f"{temperature_C:.6g} °C")
    rng = law.valid_temperature_range_K
    if rng is None or rng[0] - tolerance_K <= t_K <= rng[1] + tolerance_K:
        return None
    return (f"{temperature_C:.6g} °C lies outside the temperatures the {law.model} shift law was "
            f"fitted to ({rng[0] - 273.15:.2f} to {rng[1] - 273.15:.2f} °C): the values are "
            f"extrapolated")


_LAW_RANGE_WARNING = "temperatures lie outside the valid range"


@app.command("predict")
@guarded
def predict_cmd(model: Path = typer.Argument(..., help="summary.json of a build, or its folder."),
                quantity: Quantity = typer.Option(
                    ..., "--quantity", metavar="Q", show_choices=False,
                    help="Material function: " + ", ".join(q.value for q in Quantity) + "."),
                temperature: float = typer.Option(..., "--temperature", help="Temperature in °C."),
                time_grid: str | None = typer.Option(
                    None, "--time", metavar="TIME|a:b:n",
                    help="One time (10y, 3.156e8, 2h) or n log-spaced times from a to b "
                         "(1s:10y:50); units s, min, h, d, y (default s)."),
                frequency_grid: str | None = typer.Option(
                    None, "--frequency", metavar="FREQ|a:b:n",
                    help="One frequency (1Hz, 2kHz) or n log-spaced frequencies from a to b "
                         "(0.01:100:50); units mHz, Hz, kHz (default Hz)."),
                tolerance: float = TOL_OPT,
                out: Path | None = typer.Option(None, "--out", "-o",
                                                   help="CSV file (default: stdout)."),
                band: float | None = typer.Option(
                    None, "--band", metavar="LEVEL",
                    help="Also write <quantity>_low_<unit> and <quantity>_high_<unit>: the "
                         "interval at this level (e.g. 0.95) from the build's bootstrap.")):
    """A material function at any temperature from a build's master curve and shift law."""
    from .axis_text import FREQUENCY_UNITS_HZ, TIME_UNITS_S, parse_axis
    from .exceptions import ExtrapolationWarning
    from .model import TIME_QUANTITIES
    from .workflow import predict

    if (time_grid is None) == (frequency_grid is None):
        raise typer.BadParameter("give exactly one of --time or --frequency",
                                 param_hint="--time/--frequency")
    is_time = quantity.value in TIME_QUANTITIES
    if is_time and time_grid is None:
        raise typer.BadParameter(f"{quantity.value} is a function of time: use --time",
                                 param_hint="--time")
    if not is_time and frequency_grid is None:
        raise typer.BadParameter(f"{quantity.value} is a function of frequency: use --frequency",
                                 param_hint="--frequency")
    option = "--time" if is_time else "--frequency"
    try:
        grid_text = time_grid or frequency_grid
        assert grid_text is not None   # the one the quantity needs, checked above
        grid = parse_axis(grid_text,
                          TIME_UNITS_S if is_time else FREQUENCY_UNITS_HZ)
    except ValueError as exc:
        raise typer.BadParameter(str(exc), param_hint=option) from None
    m = load_model(model)
    outside = _temperature_messages(m.law, float(temperature), tolerance)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        frame = predict(m, quantity.value, float(temperature),
                        **({"time_s": grid} if is_time else {"frequency_Hz": grid}), band=band)
        if outside is not None:
            warnings.warn(outside, ExtrapolationWarning, stacklevel=1)  # recorded just above
    # the law's own range warning is in kelvin and has no tolerance: ours above replaces it
    caught = [w for w in caught if _LAW_RANGE_WARNING not in str(w.message)]
    _emit_table(frame, out, caught)


@app.command("history")
@guarded
def history_cmd(model: Path = typer.Argument(..., help="summary.json of a build, or its folder."),
                table: Path = typer.Argument(..., help="CSV: time, temperature (optional), and "
                                                       "strain or stress."),
                out: Path | None = typer.Option(None, "--out", "-o",
                                                   help="CSV file (default: stdout).")):
    """Stress under a strain history, or strain under a stress history, with temperatures."""
    from .history import strain_under_stress, stress_under_strain
    from .io.history_table import check_temperatures_for_law, read_history_table, refuse_overflow

    m = load_model(model)
    h = read_history_table(table)
    check_temperatures_for_law(h, m.law)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        kwargs = ({} if h.temperature_K is None
                  else {"temperature_K": h.temperature_K, "log10_aT": m.log10_aT,
                        "vertical_factor": None if m.vertical is None else m.vertical_factor})
        if h.control == "strain":
            response = stress_under_strain(m.series, h.time_s, h.values, **kwargs)
        else:
            response = strain_under_stress(m.series, h.time_s, h.values, **kwargs)
    frame = response.to_frame()
    refuse_overflow(h, frame, "stress_Pa" if h.control == "strain" else "strain")
    _emit_table(frame, out, caught)


@app.command("batch")
@guarded
def batch_cmd(manifest: Path = typer.Argument(..., help="CSV or JSON Lines with id and path "
                                                        "columns, or a folder of campaigns."),
              out: Path = typer.Option(..., "--out", "-o", help="Output folder of the batch."),
              workers: int | None = typer.Option(None, "--workers", min=1,
                                                    help="Worker processes (default: all cores)."),
              scheduler: str | None = typer.Option(
                  None, "--scheduler", help="Address of a Dask distributed scheduler."),
              no_figures: bool = typer.Option(False, "--no-figures",
                                              help="Numbers only: no figures, no HTML pages."),
              force: bool = typer.Option(False, "--force", help="Rebuild finished campaigns too."),
              quiet: bool = typer.Option(False, "--quiet", "-q", help="No progress on stderr.")):
    """Build many campaigns in parallel; resumable; one results table for the whole batch."""
    from .batch import batch_exit_code, run_batch

    table = run_batch(manifest, out, workers=workers, figures=not no_figures, force=force,
                      scheduler=scheduler, progress=not quiet, quiet=quiet)
    failed = int((table["status"] != "ok").sum()) if len(table) else 0
    typer.echo(f"{len(table) - failed} ok, {failed} failed; results: {Path(out) / 'results.csv'}")
    code = batch_exit_code(table)
    if code:
        raise typer.Exit(code)


def main():
    """Console-script entry point: usage errors become one line on stderr and exit 2.

    Typer's own exception classes live in click or in typer's vendored copy of it, depending on
    the version, so they are recognised by their interface (``format_message`` and ``exit_code``).
    """
    from ._lifetime import sigterm_raises

    # The interpreter's last collections walk every object a build left (0.3 s of the demo's
    # 3.4 s); frozen at exit, they are skipped and the objects still freed by reference count
    # (atexit handlers run last-registered first, so this runs after those of the libraries).
    atexit.unregister(gc.freeze)
    atexit.register(gc.freeze)
    try:
        with sigterm_raises():  # SIGTERM unwinds like Ctrl-C: temporary folders are removed
            code = app(prog_name="ttsp", standalone_mode=False)
    except KeyboardInterrupt as exc:
        _say_error(str(exc) or "interrupted")
        sys.exit(getattr(exc, "exit_code", 130))
    except Exception as exc:
        exit_code = getattr(exc, "exit_code", None)
        if hasattr(exc, "format_message") and isinstance(exit_code, int):
            ctx = getattr(exc, "ctx", None)
            if type(exc).__name__ == "NoArgsIsHelpError" and ctx is not None:
                typer.echo(ctx.get_help())   # a bare 'ttsp': the help, on stdout, as it is
                sys.exit(exit_code)
            name = f"ttsp {ctx.info_name}" if ctx is not None and ctx.parent is not None else "ttsp"
            hint = f" (see '{name} --help')" if exit_code == EXIT_BAD_INPUT else ""
            message = " ".join(exc.format_message().split())
            if message:  # (an empty one follows the help shown for a bare 'ttsp')
                _say_error(message + hint)
            sys.exit(exit_code)
        if type(exc).__name__ == "Abort":
            _say_error("interrupted")
            sys.exit(130)
        raise
    sys.exit(code if isinstance(code, int) else 0)


if __name__ == "__main__":  # pragma: no cover
    main()
