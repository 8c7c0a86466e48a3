"""A fit through a real Dask cluster on loopback matches a local fit."""

import math

import pytest
from scipy import stats

from analyser.inference.run import fit_campaign
from analyser.results.bundle import summariser

from .fitting import make_campaign, scenario


def test_fit_on_a_local_dask_cluster_matches_a_local_fit(tmp_path):
    import distributed          # in the test extra
    sc = scenario(stars=("TC-1",))
    campaign, _ = make_campaign(tmp_path, sc)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  host="127.0.0.1", dashboard_address=None) as cluster:
        remote = fit_campaign(campaign, tmp_path / "remote", variants=["gr"],
                              scheduler=cluster.scheduler_address,
                              finish=summariser(campaign, tmp_path / "remote"))["gr"]
    local = fit_campaign(campaign, tmp_path / "local", variants=["gr"])["gr"]
    assert abs(remote.log_z - local.log_z) < 3.0 * math.hypot(remote.log_z_err, local.log_z_err)
    for k in range(2):    # mass and distance
        assert stats.ks_2samp(remote.theta[:, k], local.theta[:, k]).pvalue > 0.001
    # the results entry and files were made on the cluster, as `analyser fit` asks
    assert remote.summary["log_z"] == remote.log_z
    assert (tmp_path / "remote" / "samples" / "gr.ecsv").exists()
