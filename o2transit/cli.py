"""The ``o2transit`` command: ``evaluate`` scenario files, ``ascent`` schedules, ``batch`` blood
gases, ``serve`` the dashboard. The top of the layering: it imports the model and, for
``serve`` only, the dashboard; nothing imports it."""

from __future__ import annotations

import argparse
import json
import sys

from .model.caution import CAUTION
from .model.scenario import ScenarioError, load_scenario
from .model.transport import solve_transport

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



def _get(d: dict, dotted: str):
    for part in dotted.split("."):
        d = d[part]
    return d


def evaluation(path) -> dict:
    """Solve one scenario file and return its JSON-ready record."""
    scenario = load_scenario(path)
    out = solve_transport(**scenario.inputs).to_dict()
    return {"scenario": scenario.name, "file": str(path), **out}


def format_table(record: dict) -> str:
    """The whole chain of one record as a readable text table."""
    lines = [f"{record['scenario']}  ({record['file']})"]
    for label, key, unit, fmt in _ROWS:
        vals = [_get(record, k) for k in (key if isinstance(key, tuple) else (key,))]
        lines.append(f"  {label:<30} {fmt.format(*vals):>16}  {unit}")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="o2transit", description="Oxygen transport from air to tissue. " + CAUTION)
    sub = parser.add_subparsers(dest="command", required=True)
    ev = sub.add_parser("evaluate", help="solve scenario files and print the chain")
    ev.add_argument("files", nargs="+", metavar="FILE")
    ev.add_argument("--json", action="store_true", help="print JSON instead of a table")
    asc = sub.add_parser("ascent", help="compare ascent schedules day by day")
    asc.add_argument("profiles", nargs="+", metavar="PROFILE")
    asc.add_argument("--json", action="store_true", help="print JSON instead of tables")
    bt = sub.add_parser("batch", help="derived blood-gas values for every row of a CSV file",
                        description="Bedside derived values (P/F, A-a, CaO2, shunt, DO2, P50, "
                                    "...) for a table of blood gases. Required columns: "
                                    "pao2_mmhg, paco2_mmhg, ph, sao2, hb_g_dl, fio2, "
                                    "temperature_c (kPa, g/L and percent variants: see README). "
                                    + CAUTION)
    bt.add_argument("input", metavar="IN.csv")
    bt.add_argument("-o", "--output", required=True, metavar="OUT.csv",
                    help="output CSV ('-' for standard output)")
    bt.add_argument("--all-columns", action="store_true",
                    help="add every derived value, not only the main ones")
    bt.add_argument("--no-progress", action="store_true", help="never show the progress bar")
    sv = sub.add_parser("serve", help="start the dashboard on this machine")
    sv.add_argument("--port", type=int, default=5006)
    sv.add_argument("--address", default="127.0.0.1",
                    help="address to bind (default 127.0.0.1; anything else exposes the page to the network)")
    sv.add_argument("--no-show", action="store_true", help="do not open a browser")
    args = parser.parse_args(argv)

    if args.command == "evaluate":
        records = []
        for f in args.files:
            try:
                records.append(evaluation(f))
            except ScenarioError as exc:
                print(f"error: {exc}", file=sys.stderr)
                return 2
        if args.json:
            print(json.dumps(records[0] if len(records) == 1 else records, indent=2))
        else:
            print("\n\n".join(format_table(r) for r in records))
            print(f"\n{CAUTION}")
        return 0
    if args.command == "ascent":
        from .model.ascent import format_ascent, load_ascent, run_ascent

        results = []
        for f in args.profiles:
            try:
                results.append(run_ascent(load_ascent(f)).to_dict())
            except ValueError as exc:
                print(f"error: {exc}" if isinstance(exc, ScenarioError)
                      else f"error: {f}: the schedule cannot be solved: {exc}", file=sys.stderr)
                return 2
        if args.json:
            print(json.dumps(results, indent=2))
        else:
            print("\n\n".join(format_ascent(r) for r in results))
            print(f"\n{CAUTION}")
        return 0
    if args.command == "batch":
        from .model.batch import BatchError, run_batch

        try:
            summary = run_batch(args.input, args.output, all_columns=args.all_columns,
                                progress=False if args.no_progress else None)
        except (BatchError, OSError) as exc:
            print(f"error: {exc}", file=sys.stderr)
            return 2
        where = "standard output" if summary.output == "-" else summary.output
        print(f"{summary.rows} rows -> {where}; {summary.rows_with_errors} with an error "
              "(see the error column)", file=sys.stderr)
        print(CAUTION, file=sys.stderr)
        return 0
    from .dashboard.app import serve

    serve(port=args.port, address=args.address, show=not args.no_show)
    return 0


if __name__ == "__main__":
    sys.exit(main())
