"""``mechfit fit``: fit one mechanism variant to every run of a study, with a posterior."""

from __future__ import annotations

import json
import sys
from pathlib import Path

from mechfit.mechanism import load_mechanism

NAME = "fit"
HELP = "fit a mechanism (one variant) to all runs of a study: maximum likelihood and posterior"
EXAMPLE = """example:
  mechfit fit study.toml --mechanism saturation.mech --out fits/saturation
  mechfit fit study.toml --mechanism saturation.mech --variant qssa:all --json

writes posterior.nc (arviz InferenceData, netCDF) and fit.json into the --out folder
(default: fit-MECHANISM-VARIANT beside the study); existing results are never replaced.
exit codes: 0 converged, 1 the fit or the sampler did not converge (results are still
written and say so), 2 bad input.
"""


def add_arguments(p) -> None:
    p.add_argument("study", help="a study file (.toml)")
    p.add_argument("--mechanism", required=True, metavar="FILE", help="a steps file (.mech)")
    p.add_argument("--variant", default="full", metavar="NAME",
                   help="model variant: full, qssa:all, qssa:X,Y, preeq:STEP, rds:STEP "
                        "(default: full)")
    p.add_argument("--out", metavar="DIR", help="folder for posterior.nc and fit.json")
    p.add_argument("--max-steps", type=int, default=20000, metavar="N",
                   help="sampling budget in steps per walker (default 20000)")
    p.add_argument("--starts", type=int, default=32, metavar="N",
                   help="size of the maximum-likelihood start design (default 32)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--json", action="store_true", help="print one JSON object on stdout")


def run(args) -> int:
    from mechfit.derive import derive_variant
    from mechfit.infer.fit import check_output_folder, fit_study
    from mechfit.infer.sampling import SamplingSettings
    from mechfit.study import load_study

    study = load_study(args.study)
    mech = load_mechanism(args.mechanism)
    model = derive_variant(mech, args.variant)
    out = Path(args.out) if args.out else Path(args.study).parent / (
        f"fit-{mech.name}-{model.name.replace(':', '_').replace(',', '_')}")
    check_output_folder(out)          # refuse before the long work, not after it
    if args.max_steps < 100 or args.starts < 0:
        from mechfit.errors import MechfitError

        raise MechfitError("--max-steps must be >= 100 and --starts >= 0")
    settings = SamplingSettings(max_steps=args.max_steps, seed=args.seed,
                                min_steps=min(1000, args.max_steps))
    result = fit_study(study, model, starts=args.starts, settings=settings, seed=args.seed,
                       progress=sys.stderr.isatty())
    written = result.write(out)
    if args.json:
        summary = result.summary()
        summary["files"] = [str(p) for p in written]
        json.dump(summary, sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        print(result.report())
        print("\nwrote " + ", ".join(str(p) for p in written))
    return 0 if result.converged else 1
