"""``railfault sweep FILE [--samples N] [--jobs J] [--store FILE.sqlite] [--resume]
[--cluster ADDRESS] [--design D] [--json]``: sample the ``vary`` block and summarise."""
from __future__ import annotations

import argparse
import json
import sys

from sim.commands.common import CAUTION, EXIT_FAIL, EXIT_PASS, add_common, emit


def _count(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if n < 1:
        raise argparse.ArgumentTypeError(f"expected 1 or more, got {n}")
    return n


def _quiet(args) -> bool:
    """No progress bar under --json, or when standard output or error is not a terminal."""
    return bool(args.json) or not (sys.stdout.isatty() and sys.stderr.isatty())


def cmd_sweep(args) -> int:
    from sim.scenario import load
    from sim.whatif import sweep

    scn = load(args.file)
    bar = None
    progress = None
    if not _quiet(args):
        from tqdm import tqdm

        bar = tqdm(total=0, unit="sample", file=sys.stderr, desc="sweep", leave=False)

        def progress(done: int, total: int) -> None:
            bar.total = total
            bar.n = done
            bar.refresh()
    try:
        res = sweep(scn, samples=args.samples, jobs=args.jobs, store=args.store,
                    resume=args.resume, cluster=args.cluster, design=args.design,
                    progress=progress)
    finally:
        if bar is not None:
            bar.close()
    if args.json:
        text = json.dumps(res.as_dict(), indent=2)
    else:
        text = res.text() + "\n\n" + CAUTION
    emit(text, args.output)
    if not args.json:
        sys.stdout.flush()
        rate = res.ran / res.wall_s if res.wall_s > 0 else 0.0
        sys.stderr.write(f"railfault: {res.ran} samples run in {res.wall_s:.1f} s "
                         f"({rate:.0f} samples/s)\n")
    return EXIT_PASS if res.passed else EXIT_FAIL


def register(sub) -> None:
    from sim.whatif.samplers import DESIGNS

    s = sub.add_parser("sweep", help="sample the vary block and summarise the races")
    add_common(s, "print the railfault-sweep/1 JSON summary")
    s.add_argument("--samples", type=_count, default=None,
                   help="random draws (per grid point); default: the file's samples")
    s.add_argument("--jobs", type=_count, default=1, help="local worker processes (default 1)")
    s.add_argument("--store", metavar="FILE.sqlite", default=None,
                   help="keep every finished sample in this SQLite file (resumable)")
    s.add_argument("--resume", action="store_true",
                   help="go on with the samples the store does not hold yet")
    s.add_argument("--cluster", metavar="ADDRESS", default=None,
                   help="run on the Dask scheduler at tcp://HOST:PORT (railfault[cluster])")
    s.add_argument("--design", choices=DESIGNS, default="monte-carlo",
                   help="how random draws are spread (default monte-carlo)")
    s.set_defaults(func=cmd_sweep)
