"""Parameter sweeps: one case run per value of one key, in parallel processes.

The swept key ``upstream_pressure`` is special: it sets every reservoir piece
whose pressure equals the case's highest reservoir pressure (in a slit or
channel: the upstream side and the upstream part of the top side together).
"""

from __future__ import annotations

import csv
import math
import multiprocessing
import os
import secrets
import signal
import sys
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

from rarefy.case import SIDES, CaseError, load_case
from rarefy.guards import GuardError, check_plan
from rarefy.mpi import launched_size
from rarefy.threads import share_of_cores

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["UPSTREAM_PRESSURE", "COLUMNS", "parse_sweep", "sweep_keys", "run_sweep",
           "write_csv", "plot_sweep"]

UPSTREAM_PRESSURE = "upstream_pressure"
COLUMNS = ("key", "value", "seed", "gas", "upstream_pressure_pa", "rarefaction_parameter",
           "knudsen_number", "mass_flow_kg_s", "mass_flow_stderr_kg_s",
           "transmission_probability", "transmission_probability_stderr",
           "free_molecular_transmission", "continuum_transmission", "run_dir", "error")
_TEXT = ("key", "value", "gas", "run_dir", "error")


def _split(text: str) -> list[str]:
    """Split on commas outside brackets, braces and quotes."""
    parts, depth, quote, cur = [], 0, "", ""
    for ch in text:
        if quote:
            quote = "" if ch == quote else quote
        elif ch in "\"'":
            quote = ch
        elif ch in "[{":
            depth += 1
        elif ch in "]}":
            depth -= 1
        elif ch == "," and depth == 0:
            parts.append(cur.strip())
            cur = ""
            continue
        cur += ch
    return parts + [cur.strip()]


def parse_sweep(sets) -> tuple[str, list[str], dict[str, str]]:
    """Split ``--set KEY=VALUE`` items into the swept key, its values and fixed overrides.

    Exactly one item has comma-separated values (commas inside brackets or
    quotes do not count); values stay strings (``"10 Pa"``).  Returns
    ``(key, values, fixed)``; raises ValueError for a malformed item, a
    repeated key, an empty value, or not exactly one list.
    """
    swept, fixed = [], {}
    for item in sets:
        if "=" not in item:
            raise ValueError(f"--set {item!r}: expected KEY=VALUE or KEY=V1,V2,...")
        key, text = (s.strip() for s in item.split("=", 1))
        if not key or key in fixed or any(key == k for k, _ in swept):
            raise ValueError(f"--set {item!r}: " + ("empty key" if not key else
                                                    f"{key} is given more than once"))
        values = _split(text)
        if any(v == "" for v in values):
            raise ValueError(f"--set {item!r}: empty value in the list")
        if len(values) > 1:
            swept.append((key, values))
        else:
            fixed[key] = values[0]
    if len(swept) != 1:
        found = ", ".join(k for k, _ in swept) or "none"
        raise ValueError("a sweep needs exactly one --set KEY=V1,V2,... with comma-separated "
                         f"values (found: {found})")
    return swept[0][0], swept[0][1], fixed


def sweep_keys(case_path, key: str, fixed: dict | None = None) -> list[str]:
    """Dotted override keys set by the swept ``key`` (itself, or for
    ``upstream_pressure`` every reservoir piece at the highest reservoir pressure)."""
    if key != UPSTREAM_PRESSURE:
        return [key]
    from rarefy.case_schema import apply_override
    from rarefy.units import parse_quantity

    load_case(case_path, fixed)  # a clear CaseError first if the case is bad
    raw = tomllib.loads(Path(case_path).read_text(encoding="utf-8"))
    for k, v in (fixed or {}).items():
        apply_override(raw, k, v, str(case_path))
    found = []
    for side in SIDES:
        entry = raw["boundaries"][side]
        pieces = [(f"boundaries.{side}", entry)] if isinstance(entry, dict) else \
            [(f"boundaries.{side}[{i}]", p) for i, p in enumerate(entry)]
        found += [(f"{k}.pressure", parse_quantity(p["pressure"], "pressure"))
                  for k, p in pieces if p.get("kind") == "reservoir"]
    if not found:
        raise CaseError(str(case_path), "boundaries",
                        f"{UPSTREAM_PRESSURE} needs a reservoir piece; the case has none")
    top = max(p for _, p in found)
    return [k for k, p in found if math.isclose(p, top, rel_tol=1e-9)]


def _prepare(case_path, key, values, fixed, plane, seed):
    """Validate every point before anything runs; returns (points, plane, keys)."""
    from rarefy.plan import make_plan

    fixed = dict(fixed or {})
    keys = sweep_keys(case_path, key, fixed)
    both = sorted(set(keys) & set(fixed))
    if both:
        raise ValueError(f"{', '.join(both)} is both swept and fixed")
    points = []
    for i, value in enumerate(values):
        overrides = {**fixed, **{k: value for k in keys}}
        case = load_case(case_path, overrides)
        try:
            check_plan(case, make_plan(case))
        except (CaseError, GuardError) as exc:   # their messages name the file already
            raise ValueError(f"{key}={value}: {exc}") from None
        except (ValueError, KeyError) as exc:
            raise ValueError(f"{case_path}: {key}={value}: {exc}") from None
        names = [fp.name for fp in case.flux_planes]
        if not names:
            raise ValueError(f"{case_path}: the case has no [[flux_planes]]; a sweep "
                             "reports the flow through one")
        if plane is None:
            plane = "throat" if "throat" in names else names[0]
        if plane not in names:
            raise ValueError(f"--plane {plane!r}: no such flux plane; the case has: "
                             + ", ".join(names))
        s = (seed + i) % 2 ** 32 if seed is not None else \
            case.run.seed if case.run.seed is not None else secrets.randbits(31)
        points.append(dict(index=i, value=value, overrides=overrides, seed=s))
    return points, plane, keys


# Workers start as fresh processes: a forked copy of a process whose parallel kernels
# already ran on an OpenMP pool would abort when its own kernels start one. (So a script
# that calls run_sweep must do so under ``if __name__ == "__main__":``, as with any
# spawned pool.)
START_METHOD = "spawn"


def _init_worker(threads: int) -> None:
    """Each worker runs its points on its share of the cores (``threads``). Workers
    ignore Ctrl-C: the parent stops them with SIGTERM, after which each running point
    writes its checkpoint (``rarefy run --resume`` continues it)."""
    from rarefy.threads import use_threads
    use_threads(threads)
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _blank(point: dict, rundir) -> dict:
    row = {k: "" if k in _TEXT else math.nan for k in COLUMNS}
    return {**row, "value": point["value"], "seed": point["seed"], "run_dir": str(rundir)}


_STOPPED = []   # set in a worker once a signal has stopped one of its points


def _run_point(case_path, point, rundir, plane, quiet) -> dict:
    """Run one point in a worker process; returns its row (``error`` set on failure)."""
    row = _blank(point, rundir)
    if _STOPPED:   # points queued before the sweep was interrupted do not start
        row["error"] = "not run (sweep interrupted)"
        return row
    try:
        if not quiet:
            import logging
            logging.basicConfig(level=logging.INFO, stream=sys.stderr,
                                format=f"[point-{point['index']:02d}] %(message)s")
        from rarefy.cli import _write_json, execute
        from rarefy.report import load_report

        case = load_case(case_path, point["overrides"])
        execute(case, Path(rundir), point["seed"], quiet)
        rep = load_report(rundir)   # applies the overrides stored in the result
        _write_json(Path(rundir) / "summary.json", rep)
        fp = rep["flux_planes"][plane]
        an = fp["analytic"]
        row.update({k: rep[k] for k in ("gas", "rarefaction_parameter", "knudsen_number")})
        row.update({k: fp[k] for k in COLUMNS[7:11]})
        row.update(upstream_pressure_pa=fp["upstream_pressure_pa"],
                   free_molecular_transmission=an.get("free_molecular_transmission", 1.0),
                   continuum_transmission=an["isentropic_choked_transmission_probability"])
    except SystemExit:  # execute() turns an interrupt into SystemExit
        _STOPPED.append(True)
        row["error"] = "interrupted (checkpoint written; resume the point with --resume)"
    except Exception as exc:
        msg = exc.format_message() if hasattr(exc, "format_message") else str(exc)
        row["error"] = msg if msg.strip() else type(exc).__name__
    return row


def write_csv(rows: list[dict], path) -> Path:
    """Write ``rows`` (columns :data:`COLUMNS`) to ``path`` atomically."""
    path = Path(path)
    tmp = path.with_name(path.name + ".tmp")
    with open(tmp, "w", newline="", encoding="utf-8") as f:
        w = csv.DictWriter(f, fieldnames=COLUMNS, extrasaction="ignore")
        w.writeheader()
        w.writerows(rows)
    os.replace(tmp, path)
    return path


def run_sweep(case_path, key: str, values, outdir, fixed: dict | None = None,
              jobs: int | None = None, seed: int | None = None, quiet: bool = True,
              plane: str | None = None) -> list[dict]:
    """Run ``case_path`` once per value of ``key``, each in its own process.

    Parameters
    ----------
    case_path : str or Path
    key : str
        Dotted override key, or ``"upstream_pressure"``.
    values : sequence of str
        Point ``i`` runs with ``key = values[i]`` into ``outdir/point-{i:02d}``.
    outdir : str or Path
        Folder for the points, ``sweep.csv`` and ``sweep.json``.
    fixed : dict, optional
        Overrides applied to every point.
    jobs : int, optional
        Worker processes; default ``min(len(values), os.cpu_count())``.
    seed : int, optional
        Point ``i`` uses ``seed + i``; default the case's seed, else a fresh one.
    quiet : bool
    plane : str, optional
        Flux plane reported; default ``throat`` if present, else the first.

    Returns
    -------
    list of dict
        One row per point (keys :data:`COLUMNS`); ``error`` is ``""`` or why
        the point failed (its numbers NaN).  A failed point stops no other.

    Raises
    ------
    CaseError, ValueError
        If any point is invalid: before anything runs or is written.
    """
    values = list(values)
    if not values:
        raise ValueError("a sweep needs at least one value")
    jobs = jobs or min(len(values), os.cpu_count() or 1)
    if jobs < 1:
        raise ValueError(f"jobs must be >= 1; got {jobs}")
    points, plane, keys = _prepare(case_path, key, values, fixed, plane, seed)
    outdir = Path(outdir)
    outdir.mkdir(parents=True, exist_ok=True)
    dirs = [outdir / f"point-{p['index']:02d}" for p in points]
    if launched_size() > 1:          # under mpiexec: the ranks share the points
        rows = _run_on_ranks(case_path, points, dirs, plane, quiet)
        if rows is None:
            return None
        return _finish(rows, key, outdir, case_path, keys, values, fixed, plane)
    with ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context(START_METHOD),
                             initializer=_init_worker,
                             initargs=(share_of_cores(jobs),)) as pool:
        futures = [pool.submit(_run_point, str(case_path), p, str(d), plane, quiet)
                   for p, d in zip(points, dirs)]
        interrupted = False
        try:
            for fut in futures:
                try:
                    fut.result()
                except Exception:
                    pass
        except KeyboardInterrupt:
            interrupted = True
            for fut in futures:
                fut.cancel()
            for proc in list(getattr(pool, "_processes", {}).values()):
                proc.terminate()     # SIGTERM: the point checkpoints and stops
            pool.shutdown(wait=True, cancel_futures=True)
        rows = []
        for p, d, fut in zip(points, dirs, futures):
            if fut.cancelled():
                rows.append({**_blank(p, d), "error": "not run (sweep interrupted)"})
                continue
            try:
                rows.append(fut.result())
            except Exception as exc:  # the worker process died
                rows.append({**_blank(p, d), "error": "interrupted" if interrupted
                             else f"worker failed: {exc!r}"})
    _finish(rows, key, outdir, case_path, keys, values, fixed, plane)
    if interrupted:
        raise KeyboardInterrupt
    return rows


def _finish(rows, key, outdir, case_path, keys, values, fixed, plane) -> list[dict]:
    for row in rows:
        row["key"] = key
    write_csv(rows, outdir / "sweep.csv")
    from rarefy.cli import _nan_to_none, _write_json
    _write_json(outdir / "sweep.json", _nan_to_none(dict(
        case=str(case_path), key=key, override_keys=keys, values=values,
        fixed=dict(fixed or {}), plane=plane, rows=[dict(r) for r in rows])))
    return rows


def _run_on_ranks(case_path, points, dirs, plane, quiet) -> list[dict] | None:
    """Point i runs on rank i mod K, one after another; rank 0 gathers the rows and
    returns them (the other ranks return None)."""
    from rarefy.mpi import local_size, world
    from rarefy.threads import use_threads
    use_threads(share_of_cores(local_size()))
    comm = world()
    rank, size = comm.Get_rank(), comm.Get_size()
    mine = {p["index"]: _run_point(str(case_path), p, str(d), plane, quiet)
            for p, d in zip(points, dirs) if p["index"] % size == rank}
    gathered = comm.gather(mine, root=0)
    if rank != 0:
        return None
    merged = {i: row for part in gathered for i, row in part.items()}
    return [merged[p["index"]] for p in points]


def _limit(ax, rows, name, label, style):
    ok = [r for r in rows if math.isfinite(r[name]) and r["rarefaction_parameter"] > 0]
    if not ok:
        return
    ys = [r[name] for r in ok]
    if max(ys) - min(ys) <= 1e-9 * max(abs(y) for y in ys):
        ax.axhline(ys[0], ls="--", color=style, label=f"{label} ({ys[0]:.3g})")
    else:
        ok.sort(key=lambda r: r["rarefaction_parameter"])
        ax.plot([r["rarefaction_parameter"] for r in ok], [r[name] for r in ok], ls="--",
                color=style, label=label)


def plot_sweep(rows: list[dict], path, title: str | None = None) -> Path:
    """Plot W (1-stderr bars) against delta (log x) with the free-molecular limit and the
    ideal isentropic (continuum) bound as dashed lines; failed points are left out.
    Writes and returns the PNG ``path``; ``title`` defaults to the gas and swept key.
    """
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    done = [r for r in rows if not r.get("error") and math.isfinite(r["rarefaction_parameter"])
            and r["rarefaction_parameter"] > 0 and math.isfinite(r["transmission_probability"])]
    fig, ax = plt.subplots(figsize=(6.4, 4.4))
    try:
        if done:
            ax.errorbar([r["rarefaction_parameter"] for r in done],
                        [r["transmission_probability"] for r in done],
                        yerr=[r["transmission_probability_stderr"] for r in done],
                        fmt="o-", capsize=3, color="C0", label="DSMC (±1 standard error)")
        _limit(ax, done, "free_molecular_transmission", "free-molecular limit", "C2")
        _limit(ax, done, "continuum_transmission", "ideal isentropic (continuum) bound", "C3")
        ax.set_xscale("log")
        ax.set_xlabel("rarefaction parameter $\\delta$")
        ax.set_ylabel("reduced flow rate W (transmission probability)")
        gas, key = (next((r[k] for r in rows if isinstance(r.get(k), str) and r[k]), "")
                    for k in ("gas", "key"))
        ax.set_title(title or f"{gas} sweep of {key}".strip())
        ax.grid(True, which="both", alpha=0.3)
        if not done:
            ax.text(0.5, 0.5, "no completed points", transform=ax.transAxes, ha="center")
        else:
            ax.legend(loc="best", fontsize=8)
        path = Path(path)
        path.parent.mkdir(parents=True, exist_ok=True)
        fig.savefig(path, dpi=120, bbox_inches="tight")
    finally:
        plt.close(fig)
    return path
