"""The ``firnray`` command line.

    firnray rays [--profile NAME|FILE] --source X,Z --receiver X,Z [--json]
    firnray profiles

Bad input exits with code 2 and a one-line message on stderr.
"""

import argparse
import json
import math
import sys

import firnray


class UsageError(Exception):
    """Bad command-line input (exit code 2)."""


class _Parser(argparse.ArgumentParser):
    def error(self, message):
        raise UsageError(message)


def _parse_point(name, text):
    parts = text.split(",")
    if len(parts) not in (2, 3):
        raise UsageError(f"--{name} expects X,Z or X,Y,Z in metres, got {text!r}")
    try:
        values = [float(p) for p in parts]
    except ValueError:
        raise UsageError(f"--{name} expects numbers X,Z or X,Y,Z in metres, got {text!r}") from None
    if not all(math.isfinite(v) for v in values):
        raise UsageError(f"--{name} expects finite coordinates, got {text!r}")
    return tuple(values)


def _fmt(value, spec):
    return "-" if value is None else format(value, spec)


def rays_table(rays, source, receiver, profile_name):
    """Readable table of rays (lines of text)."""
    lines = [f"profile {profile_name}: source {source} m -> receiver {receiver} m",
             ""]
    if not rays:
        lines.append("no ray: the receiver is in the shadow zone of the source")
        return lines
    head = (f"{'kind':<12}{'time [ns]':>14}{'launch [deg]':>14}{'arrival [deg]':>15}"
            f"{'length [m]':>13}{'turning z [m]':>15}")
    lines.append(head)
    lines.append("-" * len(head))
    for r in rays:
        lines.append(f"{r.kind:<12}{r.travel_time:>14.4f}{r.launch_zenith:>14.4f}"
                     f"{r.arrival_zenith:>15.4f}{r.path_length:>13.4f}"
                     f"{_fmt(r.turning_z, '.3f'):>15}")
    if len(rays) == 2:
        lines.append("")
        lines.append(f"delay between the two pulses: "
                     f"{rays[1].travel_time - rays[0].travel_time:.4f} ns")
    return lines


def _cmd_rays(args):
    source = _parse_point("source", args.source)
    receiver = _parse_point("receiver", args.receiver)
    try:
        profile = firnray.load_profile(args.profile)
        rays = firnray.find_rays(profile, source, receiver)
    except ValueError as err:
        raise UsageError(str(err).splitlines()[0]) from None
    name = profile.info.get("name", args.profile)
    if args.json:
        doc = {"profile": name, "source": list(source), "receiver": list(receiver),
               "units": {"travel_time": "ns", "path_length": "m", "launch_zenith": "deg",
                         "arrival_zenith": "deg", "turning_z": "m", "invariant": "1"},
               "rays": [r.as_dict() for r in rays]}
        print(json.dumps(doc, indent=2))
    else:
        print("\n".join(rays_table(rays, source, receiver, name)))
    return 0


def _cmd_profiles(args):
    for name in firnray.bundled_profiles():
        prof = firnray.load_profile(name)
        cite = prof.info.get("source", {}).get("citation", "")
        print(f"{name:<26} {cite}")
    return 0


def build_parser():
    parser = _Parser(prog="firnray", description="Radio rays through polar firn and ice.")
    parser.add_argument("--version", action="version", version=firnray.__version__)
    sub = parser.add_subparsers(dest="command", parser_class=_Parser)
    p = sub.add_parser("rays", help="every ray between a source and a receiver")
    p.add_argument("--profile", default=firnray.medium.files.DEFAULT_PROFILE,
                   help="bundled profile name or YAML file (default: %(default)s)")
    p.add_argument("--source", required=True,
                   help="source X,Z or X,Y,Z [m]; z is height, negative in the ice "
                        "(write --source=-5,-600 when X is negative)")
    p.add_argument("--receiver", required=True, help="receiver X,Z or X,Y,Z [m]")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.set_defaults(func=_cmd_rays)
    p = sub.add_parser("profiles", help="list the bundled profiles")
    p.set_defaults(func=_cmd_profiles)
    return parser


def main(argv=None):
    """Run the command line; returns the exit code."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if args.command is None:
            parser.print_help()
            return 2
        return args.func(args)
    except UsageError as err:
        print(f"firnray: error: {err}", file=sys.stderr)
        return 2


if __name__ == "__main__":
    sys.exit(main())
