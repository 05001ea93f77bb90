"""Checkpoints: the complete state of a running simulation, so a run can be continued.

One HDF5 file per run folder (``checkpoint.h5``), replaced atomically: written under a
temporary name in the same folder, flushed to disk (``fsync``) and renamed over the
old one (``os.replace``), so whatever moment a process is killed the folder holds either
the previous checkpoint or the new one, each complete.

Layout: root attributes ``format``, ``rarefy_version``, ``seed``, ``case_text``,
``case_overrides`` (JSON), ``plan`` (JSON), ``scalars`` (JSON: clock, batch counters,
settling state); datasets ``state`` (particles: x, y, vx, vy, vz), ``remainder``,
``sigcr_max``, ``row_balance``, ``watch_flux``, ``settle_history``; groups ``acc``
(accumulator arrays) and ``field_sum``, ``field_sumsq``, ``field_count`` (per-batch field
statistics).
"""

from __future__ import annotations

import json
from pathlib import Path

import h5py
import numpy as np

from rarefy import __version__
from rarefy.io.atomic import atomic_path

__all__ = ["CHECKPOINT_NAME", "write_checkpoint", "read_checkpoint", "CheckpointError"]

CHECKPOINT_NAME = "checkpoint.h5"
FORMAT = "rarefy-checkpoint-1"
GROUPS = ("acc", "field_sum", "field_sumsq", "field_count")
ARRAYS = ("state", "remainder", "sigcr_max", "row_balance", "watch_flux", "settle_history")


class CheckpointError(Exception):
    """A checkpoint that cannot be read or does not belong to the case."""


def write_checkpoint(path: Path, sim) -> Path:
    """Write the state of ``sim`` (a :class:`rarefy.engine.simulation.Simulation`)."""
    snap = sim.snapshot()
    with atomic_path(Path(path)) as tmp:
        with h5py.File(tmp, "w") as f:
            f.attrs.update(
                format=FORMAT, rarefy_version=__version__, seed=sim.seed,
                case_text=sim.case.source_text,
                case_overrides=json.dumps([list(kv) for kv in sim.case.overrides]),
                plan=json.dumps(sim.plan.to_dict()), scalars=json.dumps(snap["scalars"]))
            for name in ARRAYS:
                f.create_dataset(name, data=np.asarray(snap[name]))
            for group in GROUPS:
                g = f.create_group(group)
                for k, v in snap[group].items():
                    g.create_dataset(k, data=np.asarray(v))
    return Path(path)


def read_checkpoint(path: Path) -> tuple[dict, dict]:
    """(meta, snapshot) of a checkpoint; ``meta`` holds seed, case text, overrides and
    plan. Raises :class:`CheckpointError` for a file that is not a complete checkpoint."""
    try:
        with h5py.File(path, "r") as f:
            if f.attrs.get("format") != FORMAT:
                raise CheckpointError(f"{path}: not a rarefy checkpoint (format "
                                      f"{f.attrs.get('format')!r}, expected {FORMAT!r})")
            meta = {"seed": int(f.attrs["seed"]), "case_text": str(f.attrs["case_text"]),
                    "case_overrides": [tuple(kv) for kv in
                                       json.loads(f.attrs["case_overrides"])],
                    "plan": json.loads(f.attrs["plan"]),
                    "rarefy_version": str(f.attrs["rarefy_version"])}
            snap = {name: f[name][()] for name in ARRAYS}
            for group in GROUPS:
                snap[group] = {k: f[group][k][()] for k in f[group]}
            snap["scalars"] = json.loads(f.attrs["scalars"])
    except (OSError, KeyError) as exc:
        raise CheckpointError(f"{path}: cannot be read as a checkpoint ({exc})") from None
    return meta, snap
