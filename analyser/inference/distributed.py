"""Running fits on a Dask distributed cluster (`--scheduler tcp://HOST:PORT`).

Each model variant is one task.  Inside it, dynesty's queue of new-point
proposals is farmed out to the whole cluster through `DaskPool`, a pool with
the `map` that dynesty expects, built on the worker's own client (the
variant task secedes from its worker while it waits, so nested tasks cannot
deadlock).  Any cluster reachable by a scheduler address works: one started
by hand (`dask scheduler`, `dask worker tcp://...`), a `LocalCluster`, or a
batch system through dask-jobqueue (see docs/cluster.md).
"""

from pathlib import Path

from .run import finished, pool_queue_size


class DaskPool:
    """A map-only pool over a distributed client; `size` sets dynesty's queue."""

    def __init__(self, client, size):
        self.client = client
        self.size = int(size)

    def map(self, func, iterable):
        futures = self.client.map(func, list(iterable), pure=False)
        return self.client.gather(futures)


def _variant_task(campaign, variant, work_dir, resume, engine, proposals_per_batch, finish):
    from distributed import worker_client
    from .run import fit_variant
    with worker_client() as client:
        pool = DaskPool(client, proposals_per_batch)
        fit = fit_variant(campaign, variant, work_dir, resume=resume, pool=pool,
                          queue_size=pool.size, progress=True, engine=engine)
    return finished(fit, finish)


def fit_on_cluster(campaign, work_dir, names, scheduler, resume=False, engine=None,
                   finish=None):
    """Fit variants on the cluster at `scheduler`; returns {name: VariantFit}.

    The work folder (checkpoints, and the files `finish` writes) must be
    visible to the workers, as on a shared file system; the results come
    back to the caller.
    """
    from distributed import Client
    Path(work_dir).mkdir(parents=True, exist_ok=True)
    with Client(scheduler) as client:
        n_workers = max(1, sum(w.get("nthreads", 1) for w in
                               client.scheduler_info()["workers"].values()))
        per_batch = pool_queue_size(max(1, n_workers // max(1, len(names))))
        futures = {n: client.submit(_variant_task, campaign, n, str(work_dir), resume, engine,
                                    per_batch, finish, pure=False, key=f"variant-{n}")
                   for n in names}
        return {n: futures[n].result() for n in names}
