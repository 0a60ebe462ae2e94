"""Runs every benchmark and prints one table of speed against same-run baselines.

Each benchmark module (``bench_*.py`` here) exposes ``run(quick=False)``
returning a dict or a list of dicts. Each module runs in its own fresh
interpreter, so its peak memory is its own and one failing module does not stop
the others; this process imports only the standard library, so the children do
not inherit its memory high-water mark.

Writes ``benchmarks/_out/results.json`` and ``benchmarks/_out/results.md``.

Run ``python benchmarks/run_all.py`` (``--quick`` for fewer repeats and smaller inputs).
"""

from __future__ import annotations

import argparse
import importlib.metadata
import json
import os
import platform
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
OUT = HERE / "_out"
MODULES = ("bench_sky", "bench_view", "bench_planner", "bench_climatology", "bench_week",
           "bench_commands", "bench_readers", "bench_nowcast", "bench_archive", "bench_weather")

FAIRNESS = ("Fairness: each baseline gets the same inputs and must reach the same accuracy "
            "(sky: within 0.01 deg sun, 0.02 deg moon of per-site Skyfield; planner: greedy "
            "plan's total never above the exact one); baselines run in the same run, on the "
            "same machine.")
RATIO_NOTE = ("ratio = our median time / baseline time for the same work (below 1: faster than "
              "the baseline; for commands, how many times the unavoidable start-up or import "
              "floor). Peak memory: a command's own process; otherwise the whole benchmark "
              "process, baselines included.")

CHILD = """
import json, resource, sys
sys.path.insert(0, sys.argv[1])
module = __import__(sys.argv[2])
result = module.run(quick=sys.argv[3] == "1")
peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
def plain(value):
    return value.item() if hasattr(value, "item") else str(value)
with open(sys.argv[4], "w") as out:
    json.dump({"result": result, "peak_mb": peak}, out, default=plain)
"""


# ---------------------------------------------------------------------------------------
# Turning each module's figures into rows
# ---------------------------------------------------------------------------------------


def _row(figure, seconds, baseline=None, baseline_seconds=None, target=None, met=None,
         peak_mb=None, note="", spread=None, baseline_spread=None):
    ratio = seconds / baseline_seconds if seconds and baseline_seconds else None
    return {"figure": figure, "seconds": seconds, "baseline": baseline,
            "baseline_seconds": baseline_seconds, "ratio": ratio, "target_seconds": target,
            "met": met, "peak_mb": peak_mb, "note": note, "spread": spread,
            "baseline_spread": baseline_spread}


def _sky_rows(r: dict, peak_mb: float) -> list[dict]:
    """Sun and moon for a season: the baselines' per-site-step rates scaled to the same work."""
    figure = f"sun & moon alt/az, {r['sites']} sites x {r['nights']} nights ({r['site_steps']:,})"
    accurate = r["max_sun_error_deg"] <= 0.01 and r["max_moon_error_deg"] <= 0.02
    note = (f"max error vs Skyfield: sun {r['max_sun_error_deg']:.1e} deg, "
            f"moon {r['max_moon_error_deg']:.1e} deg")
    spread = (r["min_s"], r["max_s"])

    def baseline_spread(rates):  # the fastest rate is the shortest time
        return (r["site_steps"] / rates[1], r["site_steps"] / rates[0])

    return [_row(figure, r["seconds"], f"per-site {name} loop",
                 r["site_steps"] / r[f"{key}_rate"], met=accurate, peak_mb=peak_mb,
                 note=note if key == "pyephem" else "", spread=spread,
                 baseline_spread=baseline_spread(r[f"{key}_rate_range"]))
            for key, name in (("pyephem", "PyEphem"), ("skyfield", "Skyfield"))]


def _generic_rows(result, peak_mb: float, baseline="same-run baseline") -> list[dict]:
    """Rows from dicts using the common keys (name, seconds, baseline, target_seconds, ...)."""
    rows = []
    for r in result if isinstance(result, list) else [result]:
        size = r.get("size") or (f"{r['sites']:,} sites" if r.get("sites") else "")
        figure = r.get("name", "?") + (f", {size}" if size else "")
        note = r.get("error") or ""
        if "memory_ratio" in r:
            note = (f"peak memory {r['baseline_peak_mb']:.0f} -> {r['peak_mb']:.0f} MB, "
                    f"ratio {r['memory_ratio']:.2f}")
        if "gap" in r:
            note = f"total chance {r['objective']:.3f} vs baseline {r['baseline_objective']:.3f}"
        own_peak = r.get("peak_mb")
        met = r.get("ok", r.get("met"))
        row = _row(figure, r.get("seconds"), r.get("baseline", baseline),
                   r.get("baseline_seconds"), r.get("target_seconds"), met,
                   own_peak if own_peak is not None else peak_mb, note,
                   (r["min_s"], r["max_s"]) if r.get("min_s") is not None else None,
                   (r["baseline_min_s"], r["baseline_max_s"])
                   if r.get("baseline_min_s") is not None else None)
        if r.get("ratio") is not None and row["ratio"] is None:
            row["ratio"] = r["ratio"]
        rows.append(row)
    return rows


BASELINE_NAMES = {
    # module: what its baseline_seconds measure, when the module does not say
    "bench_view": "floor: AACGM-v2 of sites and meridians",
    "bench_climatology": "read + split the file",
}


def adapter_for(name: str):
    if name == "bench_sky":
        return _sky_rows
    label = BASELINE_NAMES.get(name, "same-run baseline")
    return lambda result, peak_mb: _generic_rows(result, peak_mb, label)


# ---------------------------------------------------------------------------------------
# Running
# ---------------------------------------------------------------------------------------


def run_module(name: str, quick: bool) -> tuple[list[dict], str | None]:
    """Rows of one module, or no rows and one line saying why."""
    if not (HERE / f"{name}.py").is_file():
        return [], f"{name}: not present, skipped"
    with tempfile.TemporaryDirectory() as scratch:
        result_file = Path(scratch) / "result.json"
        done = subprocess.run([sys.executable, "-c", CHILD, str(HERE), name,
                               "1" if quick else "0", str(result_file)],
                              stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        if done.returncode != 0 or not result_file.is_file():
            last = (done.stderr.strip().splitlines() or ["no output"])[-1]
            return [], f"{name}: failed ({last})"
        payload = json.loads(result_file.read_text())
    return adapter_for(name)(payload["result"], payload["peak_mb"]), None


def machine() -> dict:
    cpu = "unknown"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass

    def version(package):
        try:
            return importlib.metadata.version(package)
        except importlib.metadata.PackageNotFoundError:
            return "not installed"

    return {"platform": platform.platform(), "cpu": cpu, "cores": os.cpu_count(),
            "python": platform.python_version(), "numpy": version("numpy"),
            "scipy": version("scipy"), "skyfield": version("skyfield")}


# ---------------------------------------------------------------------------------------
# The table
# ---------------------------------------------------------------------------------------

COLUMNS = ("figure", "median s", "min-max s", "baseline", "baseline s", "min-max s",
           "ratio", "target s", "met", "peak MB")


def _cells(row: dict) -> list[str]:
    def num(value, pattern):
        return "-" if value is None else pattern.format(value)

    def span(pair):
        return "-" if not pair else f"{pair[0]:.3f}-{pair[1]:.3f}"

    met = {True: "yes", False: "NO", None: "-"}[row["met"]]
    return [row["figure"], num(row["seconds"], "{:.3f}"), span(row.get("spread")),
            row["baseline"] or "-", num(row["baseline_seconds"], "{:.3f}"),
            span(row.get("baseline_spread")), num(row["ratio"], "{:.2f}"),
            num(row["target_seconds"], "{:.3g}"), met, num(row["peak_mb"], "{:.0f}")]


def text_table(rows: list[dict]) -> str:
    cells = [list(COLUMNS)] + [_cells(r) for r in rows]
    widths = [max(len(c[i]) for c in cells) for i in range(len(COLUMNS))]
    lines = []
    for i, line in enumerate(cells):
        lines.append("  ".join(c.ljust(w) if j in (0, 3) else c.rjust(w)
                               for j, (c, w) in enumerate(zip(line, widths, strict=True))))
        if i == 0:
            lines.append("  ".join("-" * w for w in widths))
    return "\n".join(lines)


def markdown_table(rows: list[dict]) -> str:
    lines = ["| " + " | ".join(COLUMNS) + " |",
             "|" + "|".join(":--" if i in (0, 3) else "--:" for i in range(len(COLUMNS))) + "|"]
    lines += ["| " + " | ".join(_cells(r)) + " |" for r in rows]
    return "\n".join(lines)


def machine_line(m: dict) -> str:
    return (f"{m['platform']}; {m['cpu']}, {m['cores']} cores; Python {m['python']}, "
            f"numpy {m['numpy']}, scipy {m['scipy']}, skyfield {m['skyfield']}")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer repeats, smaller inputs")
    parser.add_argument("--only", nargs="+", choices=MODULES, help="run these modules only")
    args = parser.parse_args(argv)
    rows, skipped = [], []
    for name in args.only or MODULES:
        print(f"running {name} ...", file=sys.stderr, flush=True)
        module_rows, problem = run_module(name, args.quick)
        rows += module_rows
        if problem:
            skipped.append(problem)
    m = machine()
    notes = [r for r in rows if r["note"]]
    footer = [RATIO_NOTE, FAIRNESS] + [f"{r['figure']}: {r['note']}" for r in notes] + skipped
    print(text_table(rows))
    print()
    print("\n".join(footer))
    print(f"machine: {machine_line(m)}" + ("  (quick run)" if args.quick else ""))
    OUT.mkdir(exist_ok=True)
    (OUT / "results.json").write_text(json.dumps(
        {"machine": m, "quick": args.quick, "rows": rows, "skipped": skipped}, indent=1))
    md = [markdown_table(rows), ""] + [f"- {line}" for line in footer]
    md.append(f"- Machine: {machine_line(m)}" + (" (quick run)" if args.quick else ""))
    (OUT / "results.md").write_text("\n".join(md) + "\n")
    failed = any(line.endswith(")") and ": failed (" in line for line in skipped)
    return 1 if failed or any(r["met"] is False for r in rows) else 0


if __name__ == "__main__":
    sys.exit(main())
