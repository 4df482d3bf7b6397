"""The ``o2transit`` command: ``evaluate`` scenario files, ``ascent`` schedules, ``batch`` blood
gases, ``serve`` the dashboard. The top of the layering: it imports the model and, for
``serve`` only, the dashboard; nothing imports it.

The model (numpy, scipy, pyarrow: about a second) is imported inside :func:`main`, not when
this module is, so an interruption while it loads is reported in one line like any other,
never as a traceback."""

from __future__ import annotations

import argparse
import csv
import json
import sys
import textwrap

from . import __version__

_ROWS = (
    ("Barometric pressure", "barometric_pressure_mmhg", "mmHg", "{:.1f}"),
    ("Inspired PO2", "inspired_po2_mmhg", "mmHg", "{:.1f}"),
    ("Alveolar PO2 (PAO2)", "alveolar_po2_mmhg", "mmHg", "{:.1f}"),
    ("End-capillary PO2", "end_capillary_po2_mmhg", "mmHg", "{:.1f}"),
    ("Arterial PO2 (PaO2)", "arterial.po2_mmhg", "mmHg", "{:.1f}"),
    ("A-a gradient", "aa_gradient_mmhg", "mmHg", "{:.1f}"),
    ("SaO2", "arterial.so2", "", "{:.1%}"),
    ("CaO2", "arterial.o2_content_ml_dl", "mL/dL", "{:.2f}"),
    ("Arterial pH / PCO2", ("arterial.ph", "arterial.pco2_mmhg"), "- / mmHg", "{:.3f} / {:.1f}"),
    ("Arterial P50", "arterial.p50_mmhg", "mmHg", "{:.1f}"),
    ("DO2", "do2_ml_min", "mL/min", "{:.0f}"),
    ("VO2", "vo2_ml_min", "mL/min", "{:.0f}"),
    ("Venous PO2 (PvO2)", "venous.po2_mmhg", "mmHg", "{:.1f}"),
    ("SvO2", "venous.so2", "", "{:.1%}"),
    ("CvO2", "venous.o2_content_ml_dl", "mL/dL", "{:.2f}"),
    ("Venous pH / PCO2", ("venous.ph", "venous.pco2_mmhg"), "- / mmHg", "{:.3f} / {:.1f}"),
    ("Venous P50", "venous.p50_mmhg", "mmHg", "{:.1f}"),
    ("O2 extraction ratio", "extraction_ratio", "-", "{:.3f}"),
    ("O2 extracted per litre", "o2_extracted_ml_per_l", "mL/L", "{:.1f}"),
    ("Gain from venous right shift", "venous_shift_gain_ml_per_l", "mL/L", "{:.2f}"),
)


def printable(text: str) -> str:
    """``text`` safe for a terminal: control characters (escape sequences among them) shown
    as ``\\x1b``-style escapes instead of being acted on."""
    return "".join(
        c if c.isprintable() or c == " " else c.encode("unicode_escape").decode("ascii")
        for c in str(text)
    )


def _get(d: dict, dotted: str):
    for part in dotted.split("."):
        d = d[part]
    return d


def evaluation(path) -> dict:
    """Solve one scenario file and return its JSON-ready record."""
    from .model.scenario import load_scenario
    from .model.transport import solve_transport

    scenario = load_scenario(path)
    out = solve_transport(**scenario.inputs).to_dict()
    return {"scenario": scenario.name, "file": str(path), **out}


def format_table(record: dict) -> str:
    """The whole chain of one record as a readable text table."""
    source = {"mountain": "mountain model", "standard": "ICAO atmosphere", "given": "as given"}
    pressures = source.get(record.get("pressure_model", ""), "")
    head = f"{printable(record['scenario'])}  ({printable(record['file'])}"
    lines = [head + (f"; pressure: {pressures})" if pressures else ")")]
    for label, key, unit, fmt in _ROWS:
        vals = [_get(record, k) for k in (key if isinstance(key, tuple) else (key,))]
        lines.append(f"  {label:<30} {fmt.format(*vals):>16}  {unit}")
    if record.get("converged") is False:
        lines.append(
            f"  warning: the chain did not converge in {record.get('iterations')} passes; "
            "these are the last pass's values, not a solution"
        )
    return "\n".join(lines)


def _batch_columns_help() -> str:
    """The columns ``batch`` reads and writes, from the tables the reader itself uses."""
    from .model.batch import BATCH_OUTPUTS, COLUMN_VARIANTS
    from .model.bedside import MEASURED_LIMITS, REQUIRED_MEASURED
    from .model.caution import CAUTION

    def column(key: str) -> str:
        unit = MEASURED_LIMITS[key][2] or ("" if key == "ph" else "fraction 0-1")
        names = [f"{key} [{unit}]" if unit else key]
        names += [
            f"{name} [{v[2]}]" for name, v in COLUMN_VARIANTS.items() if v[0] == key and name != key
        ]
        return " or ".join(names)

    def wrap(items: list[str]) -> str:
        return textwrap.fill(
            "; ".join(items), width=88, initial_indent="    ", subsequent_indent="    "
        )

    optional = [k for k in MEASURED_LIMITS if k not in REQUIRED_MEASURED]
    return "\n".join(
        [
            "columns read (header on line 1, any order; a blank cell is 'not given'; other",
            "columns, such as a label or a time, are passed through unchanged):",
            "  required, one column each:",
            wrap([column(k) for k in REQUIRED_MEASURED]),
            "  optional:",
            wrap([column(k) for k in optional]),
            "columns written: the input columns, then",
            wrap(list(BATCH_OUTPUTS)),
            "  ('error' says, per row, which cell could not be used; that row's outputs are blank;",
            "  'reasons' says why a value is blank although its inputs were given; 'flags' marks",
            "  values outside their usual range),",
            "  and last, in CSV only, rows_in_output: blank on every row except the last, which",
            "  holds the number of data rows. A complete output passes the check 'last row's",
            "  rows_in_output = number of rows read'; an output cut short (a killed run on",
            "  standard output, a truncated copy) fails it.",
            "output: plain CSV, the header on line 1, no comment lines (the caution goes to",
            "standard error and into Parquet metadata); a file is written under a temporary",
            "name in the same folder and renamed when complete, with the mode of the file it",
            "replaces (else the usual mode, 0644 under umask 022). SIGINT, SIGTERM and SIGHUP",
            "remove the temporary file and exit non-zero.",
            "caution: " + CAUTION,
        ]
    )


def _positive_port(text: str) -> int:
    try:
        port = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"port = {text!r} is not a whole number") from None
    if not 1 <= port <= 65535:
        raise argparse.ArgumentTypeError(f"port = {port} is outside 1-65535")
    return port


def build_parser() -> argparse.ArgumentParser:
    """The ``o2transit`` argument parser (every option names what it takes and its default)."""
    from .model.caution import CAUTION

    fmt = argparse.RawDescriptionHelpFormatter
    parser = argparse.ArgumentParser(
        prog="o2transit",
        description="Oxygen transport from inspired air to the tissues: solve cases, compare "
        "ascent schedules, derive blood-gas values, or serve the dashboard. " + CAUTION,
    )
    parser.add_argument("--version", action="version", version=f"o2transit {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    ev = sub.add_parser(
        "evaluate",
        help="solve scenario files and print the whole chain",
        description="Solve each scenario file (TOML; schema in the package's scenarios/README.md) "
        "from inspired air to venous blood and print the chain. Every good file is printed; "
        "every bad one is reported on standard error; the exit status is 2 if any failed.",
    )
    ev.add_argument("files", nargs="+", metavar="FILE", help="scenario files (.toml)")
    ev.add_argument(
        "--json",
        action="store_true",
        help="print one JSON list (one object per good file) instead of tables (default: tables)",
    )
    asc = sub.add_parser(
        "ascent",
        help="compare ascent schedules day by day",
        description="Run each ascent schedule night by night and print the comparison. A "
        "schedule is a TOML file (name, baseline, [[day]] tables) or a CSV day table with the "
        "header day,sleep_altitude_m,high_altitude_m,fio2 (altitudes in m, FiO2 as a fraction; "
        "the person is the default sea-level baseline and the name is the file's).",
    )
    asc.add_argument(
        "profiles", nargs="+", metavar="SCHEDULE", help="schedule files (.toml or .csv)"
    )
    asc.add_argument(
        "--json",
        action="store_true",
        help="print one JSON list (one object per good schedule) instead of tables "
        "(default: tables)",
    )
    bt = sub.add_parser(
        "batch",
        help="derived blood-gas values for every row of a table",
        formatter_class=fmt,
        description=textwrap.fill(
            "Bedside derived values (P/F, A-a gradient, CaO2, shunt, DO2, in-situ P50, ...) "
            "for every row of a table of blood gases. " + CAUTION,
            width=78,
        ),
        epilog=_batch_columns_help(),
    )
    bt.add_argument(
        "input",
        metavar="IN",
        help="the blood gases: delimited text (.csv, .tsv, .txt; UTF-8) or Parquet (.parquet, .pq)",
    )
    bt.add_argument(
        "-o",
        "--output",
        required=True,
        metavar="OUT",
        help="where to write the derived values, chosen by the ending: .csv (commas; a ';' "
        "input with decimal commas stays so), .tsv (tabs), .txt (the input's delimiter) or "
        ".parquet/.pq; '-' for CSV on standard output (as .csv). Never the input, never a "
        "device, FIFO or symbolic link",
    )
    bt.add_argument(
        "--all-columns",
        action="store_true",
        help="add every derived value, not only the main ones (default: main ones)",
    )
    bt.add_argument(
        "--no-progress",
        action="store_true",
        help="never show the progress bar (default: shown on a terminal only)",
    )
    bt.add_argument(
        "--workers",
        type=_workers,
        default=None,
        metavar="N",
        help="chunks of rows computed at once, in worker processes (default: 2, or 1 on a "
        "one-core machine); the output is the same for any N",
    )
    sv = sub.add_parser(
        "serve",
        help="start the dashboard on this machine",
        description="Serve the dashboard (case screen /, ascent planner /ascent, lecture "
        "/lecture) from this computer; it needs no internet connection.",
    )
    sv.add_argument(
        "--port", type=_positive_port, default=5006, help="TCP port to listen on (default 5006)"
    )
    sv.add_argument(
        "--address",
        default="127.0.0.1",
        help="address to listen on (default 127.0.0.1, this computer only; "
        "0.0.0.0 or a network address lets other machines open the page)",
    )
    sv.add_argument(
        "--no-show", action="store_true", help="do not open a browser tab (default: open one)"
    )
    return parser


def _report(exc: BaseException | str, prefix: str = "") -> None:
    """An error on standard error, one ``error:`` line per problem (control characters
    shown, not obeyed)."""
    for line in str(exc).splitlines() or [""]:
        print(f"error: {prefix}{printable(line)}", file=sys.stderr)


def _evaluate(files: list[str], as_json: bool) -> int:
    from .model.caution import CAUTION
    from .model.scenario import ScenarioError

    records, failed = [], 0
    for f in files:
        try:
            records.append(evaluation(f))
        except ScenarioError as exc:
            failed += 1
            _report(exc)
    if as_json:
        print(json.dumps(records, indent=2))
    elif records:
        print("\n\n".join(format_table(r) for r in records))
        print(f"\n{CAUTION}")
    if failed:
        print(f"{failed} of {len(files)} files failed", file=sys.stderr)
    return 2 if failed else 0


def _ascent(files: list[str], as_json: bool) -> int:
    from .model.ascent import AscentError, format_ascent, load_ascent, run_ascent
    from .model.caution import CAUTION

    results, failed = [], 0
    from .model.files import read_text

    for f in files:
        try:
            # the shared reader's refusals (special, empty, oversized, not UTF-8) before the
            # loader, whose CSV path reads the file itself
            read_text(f, AscentError)
            results.append(run_ascent(load_ascent(f)).to_dict())
        except AscentError as exc:
            failed += 1
            _report(exc)
        except csv.Error as exc:  # a day table the csv module cannot split (a bare \r)
            failed += 1
            _report(
                f"{f}: not a readable CSV day table ({str(exc).split(' - ')[0]}: a line ends "
                "in a bare carriage return or a cell holds a line break; save it with ordinary "
                "line ends)"
            )
        except ValueError as exc:
            failed += 1
            why = str(exc).removeprefix(f"{f}: ")  # the model's message may name the file
            print(
                f"error: {printable(f)}: the schedule cannot be solved: {printable(why)}",
                file=sys.stderr,
            )
    if as_json:
        print(json.dumps(results, indent=2))
    elif results:
        shown = [{**r, "name": printable(r["name"]), "file": printable(r["file"])} for r in results]
        print("\n\n".join(format_ascent(r) for r in shown))
        print(f"\n{CAUTION}")
    if failed:
        print(f"{failed} of {len(files)} files failed", file=sys.stderr)
    return 2 if failed else 0


class _Signalled(BaseException):
    """SIGTERM or SIGHUP arrived: unwind (removing temporary files) and exit non-zero."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def _workers(text: str) -> int:
    """``--workers``: a whole number from 1 to 64."""
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number (1-64)") from None
    if not 1 <= n <= 64:
        raise argparse.ArgumentTypeError(f"{n} is outside the allowed range 1-64")
    return n


def _raise_signalled(signum, _frame) -> None:
    raise _Signalled(signum)


def _stop_on_signals() -> None:
    """SIGTERM and SIGHUP unwind the run (the temporary file is removed) instead of killing
    it outright; a signal the caller set to be ignored (``nohup`` ignores SIGHUP) stays
    ignored, as other command-line tools leave it."""
    import signal

    for name in ("SIGTERM", "SIGHUP"):
        if hasattr(signal, name):
            signum = getattr(signal, name)
            if signal.getsignal(signum) != signal.SIG_IGN:
                signal.signal(signum, _raise_signalled)


def _batch(args) -> int:
    from .model.batch import END_COLUMN, BatchError, run_batch
    from .model.caution import CAUTION

    _stop_on_signals()
    try:
        summary = run_batch(
            args.input,
            args.output,
            all_columns=args.all_columns,
            workers=args.workers,
            progress=False if args.no_progress else None,
        )
    except BrokenPipeError:
        raise
    except (BatchError, OSError) as exc:
        _report(exc)
        return 2
    where = "standard output" if summary.output == "-" else printable(summary.output)
    end = (
        f"; complete: the last row's {END_COLUMN} is {summary.rows}"
        if summary.format == "csv"
        else f"; Parquet metadata o2transit.rows = {summary.rows}"
    )
    print(
        f"{summary.rows} rows -> {where}; {summary.rows_with_errors} with an error "
        f"(see the error column){end}",
        file=sys.stderr,
    )
    print(CAUTION, file=sys.stderr)
    return 0


def _serve(args) -> int:
    from .dashboard.app import PortBusyError, serve

    try:
        serve(port=args.port, address=args.address, show=not args.no_show)
    except PortBusyError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    return 0


def main(argv=None) -> int:
    """Run the ``o2transit`` command; returns the exit status."""
    try:
        args = build_parser().parse_args(argv)
        if args.command == "evaluate":
            return _evaluate(args.files, args.json)
        if args.command == "ascent":
            return _ascent(args.profiles, args.json)
        if args.command == "batch":
            return _batch(args)
        return _serve(args)
    except KeyboardInterrupt:
        print("interrupted (SIGINT); no output file left behind", file=sys.stderr)
        sys.stderr.flush()
        return 130
    except _Signalled as stop:
        import signal

        name = signal.Signals(stop.signum).name
        print(f"interrupted ({name}); no output file left behind", file=sys.stderr)
        return 128 + stop.signum
    except BrokenPipeError:
        # the reader went away (`| head`): stop quietly, as other command-line tools do
        import os

        try:
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        except (OSError, ValueError):
            pass
        sys.stderr.close()
        return 0


if __name__ == "__main__":
    sys.exit(main())
