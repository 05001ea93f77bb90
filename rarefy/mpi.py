"""Running on several MPI ranks: independent replicas of one run, and sweep points.

Optional: needs ``mpi4py`` (``pip install 'rarefy[mpi]'``, which brings MPICH as a
binary wheel, so no system MPI is needed) and a start with ``mpiexec -n K``.

Replicas: every rank runs the same case with its own random stream (seed mixed with the
rank by numpy's SeedSequence); rank 0 gathers the accumulators and writes one result
whose batches are those of all replicas one after the other. Replicas are independent,
so the batch-means standard error of the combined result falls as 1/sqrt(K) for the
same number of steps per replica.
"""

from __future__ import annotations

import os

import numpy as np

__all__ = ["MPIUnavailable", "launched_size", "local_size", "world", "replica_seed",
           "combine_replicas"]

INSTALL_HINT = ("install the optional MPI support with `pip install 'rarefy[mpi]'` (mpi4py "
                "and MPICH wheels; no system MPI needed) and start with `mpiexec -n K rarefy "
                "...`")


class MPIUnavailable(RuntimeError):
    """mpi4py is missing or not usable."""


def launched_size() -> int:
    """Number of ranks the process was started with (1 when not under mpiexec); read from
    the launcher's environment (MPICH/Hydra PMI_SIZE, Open MPI OMPI_COMM_WORLD_SIZE)
    without importing MPI."""
    for var in ("PMI_SIZE", "OMPI_COMM_WORLD_SIZE", "MPI_LOCALNRANKS"):
        value = os.environ.get(var)
        if value and value.isdigit():
            return int(value)
    return 1


def local_size() -> int:
    """Ranks started on this node (MPICH MPI_LOCALNRANKS, Open MPI
    OMPI_COMM_WORLD_LOCAL_SIZE), else all ranks: they share this machine's cores."""
    for var in ("MPI_LOCALNRANKS", "OMPI_COMM_WORLD_LOCAL_SIZE"):
        value = os.environ.get(var)
        if value and value.isdigit():
            return int(value)
    return launched_size()


def world():
    """The MPI world communicator; raises :class:`MPIUnavailable` with install hints."""
    try:
        from mpi4py import MPI
    except ImportError as exc:
        raise MPIUnavailable(f"MPI is not available ({exc}); {INSTALL_HINT}") from None
    return MPI.COMM_WORLD


def replica_seed(seed: int, rank: int) -> int:
    """Seed of replica ``rank`` of a run with ``seed`` (31 bits)."""
    return int(np.random.SeedSequence([int(seed), 7919, int(rank)]).generate_state(1)[0]
               & 0x7FFFFFFF)


PER_BATCH = ("surf", "flux", "collisions", "particles", "probe_mom", "probe_hist")
SUMMED = ("cell_total",)


def _payload(sim) -> dict:
    acc, nb = sim.acc, sim.acc.batch
    return {
        "per_batch": {k: getattr(acc, k)[:nb] for k in PER_BATCH},
        "summed": {k: getattr(acc, k) for k in SUMMED},
        "fields": {name: (acc.field_sum[name], acc.field_sumsq[name], acc.field_count[name])
                   for name in acc.field_sum},
        "particle_steps": sim.clock.particle_steps,
        "phase_seconds": dict(sim.clock.phase_seconds),
        "lost_duplicates": sim.lost_duplicates,
        "seed": sim.seed,
    }


def combine_replicas(sim, payloads: list[dict]) -> None:
    """Fold the gathered ``payloads`` (one per rank, rank 0's first) into ``sim``'s
    accumulators: per-batch tallies concatenated in rank order, sums added."""
    acc = sim.acc
    for k in PER_BATCH:
        setattr(acc, k, np.concatenate([p["per_batch"][k] for p in payloads], axis=0))
    for k in SUMMED:
        setattr(acc, k, np.sum([p["summed"][k] for p in payloads], axis=0))
    for name in acc.field_sum:
        acc.field_sum[name] = np.sum([p["fields"][name][0] for p in payloads], axis=0)
        acc.field_sumsq[name] = np.sum([p["fields"][name][1] for p in payloads], axis=0)
        acc.field_count[name] = np.sum([p["fields"][name][2] for p in payloads], axis=0)
    acc.batches = acc.batch = acc.flux.shape[0]
    acc.step_in_batch = 0
    sim.clock.particle_steps = sum(p["particle_steps"] for p in payloads)
    for key in sim.clock.phase_seconds:
        sim.clock.phase_seconds[key] = sum(p["phase_seconds"][key] for p in payloads)
    sim.lost_duplicates = sum(p["lost_duplicates"] for p in payloads)
    sim.replica_seeds = [p["seed"] for p in payloads]


def gather_replicas(comm, sim) -> list[dict] | None:
    """Gather every rank's accumulators on rank 0 (None elsewhere)."""
    return comm.gather(_payload(sim), root=0)
