"""``periplan demo``: the whole flow on the bundled demo catalogue and site, for the coming week."""

from __future__ import annotations

import argparse

from .plan import add_plan_options, run_plan

EXAMPLES = """\
examples:
  periplan demo                       # the coming week, into ./periplan-demo
  periplan demo --start 2026-12-07 --out demo-week --force

The demo scenario is invented: the Altozano Ridge Observatory and its targets do not exist.
"""


def register(sub):
    p = sub.add_parser(
        "demo", help="plan the coming week on the bundled demo catalogue and site",
        description="Run the whole planner (events, nights, visibility, schedule, lists, charts, "
                    "calendar) on the bundled demo catalogue and observatory, and say where the files are.",
        epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    add_plan_options(p, need_inputs=False)
    p.set_defaults(run=run)
    return p


def run(args) -> int:
    from importlib import resources

    data = resources.files("planner") / "data"
    with resources.as_file(data / "demo_targets.csv") as cat, resources.as_file(data / "demo_site.toml") as site:
        return run_plan(str(cat), str(site), args)
