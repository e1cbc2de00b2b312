"""Command line of the survey (``python3 -m wvr.survey``, also ``skyphase survey``).

    python3 -m wvr.survey run NIGHT_OR_GLOB... [--manifest FILE] --catalogue FILE
        [--scheduler ADDRESS | --workers N --threads-per-worker N] [--options JSON]
        [--retry-failed] [--no-progress]
    python3 -m wvr.survey report CATALOGUE -o DIRECTORY
    python3 -m wvr.survey generate SPEC -o DIRECTORY [--no-simulate]

Exit status: 0 when every night is catalogued ok, 1 when some failed (they are in the
catalogue with their error), 2 with one line on stderr for bad input.
"""
import argparse
import json
import sys

import wvr


def _parser():
    parser = argparse.ArgumentParser(prog="python3 -m wvr.survey", description=__doc__.split("\n\n")[0])
    commands = parser.add_subparsers(dest="command", required=True)
    run = commands.add_parser("run", help="process many nights on a dask cluster into a catalogue")
    run.add_argument("nights", nargs="*",
                     help="night files, MeasurementSets or glob patterns (quote them)")
    run.add_argument("--manifest", action="append", default=[],
                     help="text file listing nights, one per line (repeatable)")
    run.add_argument("--catalogue", required=True, help="SQLite catalogue (created if missing)")
    run.add_argument("--scheduler", default=None,
                     help="address of an existing dask scheduler (default: a local cluster)")
    run.add_argument("--workers", type=int, default=2, help="local cluster: worker processes")
    run.add_argument("--threads-per-worker", type=int, default=1,
                     help="local cluster: threads per worker (also the pipeline's threads)")
    run.add_argument("--options", default="{}",
                     help='processing options as JSON, e.g. \'{"window_s": 120}\'; '
                          'MeasurementSets need "ms_brightness"')
    run.add_argument("--retry-failed", action="store_true",
                     help="process again the nights catalogued as failed")
    run.add_argument("--no-progress", action="store_true", help="no progress bar")
    report = commands.add_parser("report", help="season report (HTML and JSON) of a catalogue")
    report.add_argument("catalogue")
    report.add_argument("-o", "--output", required=True, help="directory for index.html")
    generate = commands.add_parser("generate", help="simulated season from a spec (TOML)")
    generate.add_argument("spec")
    generate.add_argument("-o", "--output", required=True, help="directory for the nights")
    generate.add_argument("--no-simulate", action="store_true",
                          help="write the scenario files only")
    generate.add_argument("--threads", type=int, default=0, help="simulator threads (0 = all)")
    return parser


def _positive(value, name):
    if value < 1:
        raise wvr.WvrValueError(f"{name} = {value} must be >= 1")
    return value


def main(argv=None):
    args = _parser().parse_args(argv)
    try:
        if args.command == "run":
            import wvr.survey

            try:
                options = json.loads(args.options)
            except json.JSONDecodeError as error:
                raise wvr.WvrValueError(f"--options: not JSON ({error}): {args.options}") from error
            if not isinstance(options, dict):
                raise wvr.WvrValueError(f"--options: expected a JSON object, got {args.options}")
            summary = wvr.survey.survey(
                args.nights, args.catalogue, manifests=args.manifest, options=options,
                scheduler_address=args.scheduler,
                workers=_positive(args.workers, "--workers"),
                threads_per_worker=_positive(args.threads_per_worker, "--threads-per-worker"),
                retry_failed=args.retry_failed, progress=not args.no_progress)
            print(summary.text())
            return 0 if summary.failed == 0 else 1
        if args.command == "report":
            from wvr.survey.season_report import build_season_report

            index = build_season_report(args.catalogue, args.output)
            print(f"season report: {index}")
            return 0
        from wvr.survey.season import generate_season

        written = generate_season(args.spec, args.output, simulate=not args.no_simulate,
                                  threads=args.threads)
        print(f"season: {len(written)} nights in {args.output} (manifest nights.txt)")
        return 0
    except wvr.WvrValueError as error:
        print(f"error: {error}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
