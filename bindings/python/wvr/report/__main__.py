"""python3 -m wvr.report NIGHT -o DIRECTORY [processing options]: the night report."""
import argparse
import sys

import wvr
from wvr.report import report_night


def _parser():
    parser = argparse.ArgumentParser(
        prog="python3 -m wvr.report",
        description="Processes a night with the library's night pipeline (reusing the stages "
                    "stored in the file) and writes its HTML report, figures and report.json.")
    parser.add_argument("night", help="night file (HDF5)")
    parser.add_argument("-o", "--output", required=True,
                        help="directory for index.html (new, empty, or a report to replace)")
    parser.add_argument("--name", help="name of the night in the title (default: file stem)")
    parser.add_argument("--site", help="site file (TOML) overriding the night's own site model")
    parser.add_argument("--window-s", type=float,
                        help="coefficient window (s) of the retrieval (default: stored, or 60)")
    parser.add_argument("--obs-freq-ghz", type=float,
                        help="observing frequency (GHz) (default: the night's scans)")
    parser.add_argument("--thresholds", help="diagnosis thresholds file (TOML)")
    parser.add_argument("--advice-layer-height-m", type=float, default=1000.0)
    parser.add_argument("--advice-separation-deg", type=float, default=2.0)
    parser.add_argument("--advice-target-rms-deg", type=float, default=30.0)
    parser.add_argument("--threads", type=int, default=0, help="worker threads (0 = all cores)")
    return parser


def main(argv=None):
    args = _parser().parse_args(argv)
    try:
        options = {
            "window_s": args.window_s, "obs_freq_ghz": args.obs_freq_ghz,
            "advice_layer_height_m": args.advice_layer_height_m,
            "advice_separation_deg": args.advice_separation_deg,
            "advice_target_rms_deg": args.advice_target_rms_deg, "threads": args.threads,
        }
        if args.site:
            options["site"] = wvr.load_site(args.site)
        if args.thresholds:
            options["thresholds"] = wvr.load_diagnosis_thresholds(args.thresholds)
        index = report_night(args.night, args.output, name=args.name, **options)
    except wvr.WvrNothingUsable as error:
        print(f"wvr.report: {error}", file=sys.stderr)
        return 3  # as skyphase: valid input with nothing usable in it
    except (wvr.WvrError, OSError) as error:
        print(f"wvr.report: {error}", file=sys.stderr)
        return 2
    print(index)
    return 0


if __name__ == "__main__":
    sys.exit(main())
