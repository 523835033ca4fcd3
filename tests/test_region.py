"""Regional studies: serial and distributed runs agree, interrupted runs resume, weather as
data, bifacial rows."""

import json
import os
import subprocess
import sys
from dataclasses import fields, replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from typer.testing import CliRunner

import tandem
from tandem.cli.app import app
from tandem.design.matching import StackDesign
from tandem.jobs.inputs import OperatingPoint
from tandem.jobs.region import RegionJob, read_sites, run_region, write_region_outputs
from tandem.design.sky import Rows, clear_sky_series, parse_period
from tandem.design.weather import weather_frame_series, weather_series
from tandem.design.yields import hourly, yield_sweep

SITES = """name,latitude,longitude,altitude_m,timezone,weather
Mesa Verdeja,35.2,-106.4,1650,Etc/GMT+7,
Porto Brisa,38.7,-9.1,50,,
Lago Norte,60.2,24.9,20,Etc/GMT-2,
Serra Fria,-33.9,18.4,100,Etc/GMT-2,
Dunas Altas,23.5,32.9,200,,
"""


@pytest.fixture(scope="module")

def job():
    f, b = tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon")
    return RegionJob(f, b, OperatingPoint(), (1.62, 1.70, 1.78, 1.86), (300.0, 700.0, 1500.0),
                     160e3, period="month:2026-06", rows=Rows())


@pytest.fixture
def sites(tmp_path):
    path = tmp_path / "sites.csv"
    path.write_text(SITES)
    return read_sites(path)


def numbers(result):
    return result.to_frame().drop(columns="seconds")


@pytest.fixture(scope="module")
def day_job(job):
    """The same job over one day: what serial and cluster runs are compared on (the physics
    of a month is tested elsewhere; the rules do not depend on the period's length)."""
    return replace(job, period="day:2026-06-21")


@pytest.fixture(scope="module")
def rules_job():
    """What the folder, resume and cluster rules are tested on: one day of a pair without
    extra recombination terms (a CIGS back: the closed-form junctions, about 7× faster a
    site than an Auger-limited silicon back). The rules do not depend on the absorbers."""
    return _day_job()


def test_two_worker_cluster_gives_exactly_the_serial_numbers(sites, day_job, tmp_path):
    job, sites = day_job, sites[:3]  # a site for each worker and one more
    serial = run_region(sites, job, tmp_path / "serial", workers=1)
    cluster = run_region(sites, job, tmp_path / "cluster", workers=2)
    pd.testing.assert_frame_equal(numbers(serial), numbers(cluster), check_exact=True)
    assert sorted(cluster.computed) == sorted(s.name for s in sites)


def test_an_interrupted_region_resumes_with_only_the_rest(sites, rules_job, tmp_path):
    job, sites = rules_job, sites[:3]  # two finished, one left: the rules need no more
    folder = tmp_path / "region"

    def stop_after_two(done, total):
        if done == 2:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_region(sites, job, folder, workers=1, progress=stop_after_two)
    assert len(stored(folder)) == 2  # stored as each site finished
    resumed = run_region(sites, job, folder, workers=1)
    assert resumed.reused == [s.name for s in sites[:2]]
    assert resumed.computed == [s.name for s in sites[2:]]
    fresh = run_region(sites, job, tmp_path / "fresh", workers=1)
    pd.testing.assert_frame_equal(numbers(resumed), numbers(fresh), check_exact=True)
    # changed inputs: the folder is refused, and replaced only with overwrite
    other = replace(job, albedo=0.3)
    with pytest.raises(tandem.TandemInputError, match="other inputs; choose another --out"):
        run_region(sites, other, folder, workers=1)
    again = run_region(sites, other, folder, workers=1, overwrite=True)
    assert sorted(again.computed) == sorted(s.name for s in sites)


def test_outputs_describe_themselves_and_only_tandem_folders_are_used(sites, rules_job, tmp_path):
    import xarray as xr

    job = rules_job
    result = run_region(sites[:2], job, tmp_path / "r", workers=1)
    paths = write_region_outputs(result, grids=True)
    data = xr.open_dataset(tmp_path / "r" / "region.nc", engine="scipy")
    assert list(data["site"].values) == ["Mesa Verdeja", "Porto Brisa"]
    assert data["energy_2t_by_design"].dims == ("site", "design_front_gap", "design_front_thickness")
    # unit suffixes become units, as in every result's dataset; the grid keeps its own name
    assert data["front_gap"].attrs["units"] == "eV" and data["energy_2t"].dims == ("site",)
    assert data["energy_2t"].attrs["units"] == "kWh/m2"
    best = data["energy_2t_by_design"].max(dim=["design_front_gap", "design_front_thickness"])
    assert np.allclose(best, data["energy_2t"], rtol=1e-12)  # each site's optimum on its grid
    # CF: a site's position as coordinates with their standard names and units
    assert "latitude" in data.coords and data.latitude.attrs["standard_name"] == "latitude"
    assert data.longitude.attrs["units"] == "degrees_east"
    assert list(data.latitude.values) == [s.latitude for s in sites[:2]]
    assert data.attrs["Conventions"] == "CF-1.8"
    assert data.attrs["job_sha256"] == job.job_fingerprint()  # the resume key, for provenance
    data.close()
    assert {p.name for p in paths} == {"region.nc", "region.csv", "region.png"}
    with pytest.raises(tandem.TandemInputError, match="has no folder to write into"):
        write_region_outputs(replace(result, folder=None))
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("keep")
    with pytest.raises(tandem.TandemInputError, match="not a region folder tandem wrote"):
        run_region(sites, job, foreign, workers=1)
    assert (foreign / "notes.txt").read_text() == "keep"


def tmy3():
    import pvlib

    return os.path.join(os.path.dirname(pvlib.__file__), "data", "723170TYA.CSV")


def pvlib_poa_global(site, frame):
    """pvlib's plane-of-array global irradiance [W/m²] at each row of a weather frame (solar
    position, isotropic sky, albedo 0.2), on the site's own plane."""
    import pvlib

    pos = pvlib.solarposition.get_solarposition(frame.index, site.latitude, site.longitude,
                                                site.altitude_m)
    return pvlib.irradiance.get_total_irradiance(
        site.tilt_deg, site.azimuth_deg, pos["apparent_zenith"], pos["azimuth"], frame["dni"],
        frame["ghi"], frame["dhi"], albedo=0.2)["poa_global"]


def test_weather_file_insolation_equals_pvlib_plane_of_array_total():
    """The plane-of-array insolation equals pvlib's own total for the same file and steps
    (pvlib.irradiance.get_total_irradiance, isotropic sky), to rounding."""
    import pvlib

    site = tandem.Site("weather test", 36.1, -79.9, 270.0, 30.0, 180.0, "Etc/GMT+5")
    series = weather_series(site, tmy3())
    data, _ = pvlib.iotools.read_tmy3(tmy3(), coerce_year=2026, map_variables=True)
    data.index = data.index - pd.Timedelta(minutes=30)
    poa = pvlib_poa_global(site, data.loc[series.times])
    assert series.insolation_kWh_m2 == pytest.approx(poa.sum() / 1000, rel=1e-9)
    # weather as data: the same frame gives the same series
    frame = weather_frame_series(site, data[["ghi", "dni", "dhi", "temp_air", "wind_speed"]],
                                 source="weather file 723170TYA.CSV")
    assert frame.insolation_kWh_m2 == series.insolation_kWh_m2


def test_a_half_hourly_weather_frame_counts_half_hours():
    """Each step of a weather frame lasts its own spacing: two June days of the same file,
    every hour's values given twice 30 minutes apart, hold pvlib's plane-of-array sum over
    those steps times half an hour (a step taken as an hour would double it)."""
    import pvlib

    site = tandem.Site("weather test", 36.1, -79.9, 270.0, 30.0, 180.0, "Etc/GMT+5")
    data, _ = pvlib.iotools.read_tmy3(tmy3(), coerce_year=2026, map_variables=True)
    data.index = data.index - pd.Timedelta(minutes=30)
    columns = ["ghi", "dni", "dhi", "temp_air", "wind_speed"]
    half = data[columns].loc["2026-06-20":"2026-06-21"].resample("30min").ffill()
    series = weather_frame_series(site, half, source="half-hourly test frame")
    poa = pvlib_poa_global(site, half.loc[series.times])
    assert series.insolation_kWh_m2 == pytest.approx(poa.sum() * 0.5 / 1000, rel=1e-9)


def test_a_pvlib_location_is_a_site():
    from pvlib.location import Location

    from tandem.design.sky import site_from_location

    site = site_from_location(Location(35.2, -106.4, "Etc/GMT+7", 1650, "field"), tilt_deg=35.0)
    assert (site.name, site.altitude_m, site.timezone, site.tilt_deg) == ("field", 1650.0,
                                                                          "Etc/GMT+7", 35.0)


@pytest.fixture(scope="module")
def bifacial_runs():
    site = tandem.Site("field", 35.2, -106.4, 1650.0, 30.0, 180.0, "Etc/GMT+7", albedo=0.25)
    # a clear June day holds the trend a month shows (same optima; the rules are per step)
    times = parse_period("day:2026-06-21", site.timezone, 60)
    design = StackDesign(tandem.load_absorber("perovskite-wide"), tandem.load_absorber("silicon"),
                         0.0, 0.0, 0.0)
    gaps, thick = np.linspace(1.60, 1.90, 11), np.geomspace(300, 1500, 8)
    ref = tandem.reference_spectrum("am1.5g").photon_flux()
    runs = {}
    for key, rows, albedo in (("mono", None, 0.25), ("closed", Rows(bifaciality=0.0), 0.25),
                              ("bifacial", Rows(), 0.25), ("dark ground", Rows(), 0.0)):
        series = clear_sky_series(replace(site, albedo=albedo), times, rows)
        swept = None if key == "dark ground" else yield_sweep(design, series, gaps, thick, 160e3, ref)
        runs[key] = (series, swept, design)
    return runs


def test_a_closed_rear_is_exactly_monofacial(bifacial_runs):
    mono, closed = bifacial_runs["mono"][1], bifacial_runs["closed"][1]
    assert np.array_equal(mono.energy_2t, closed.energy_2t)
    assert np.array_equal(mono.energy_4t, closed.energy_4t)


def test_rear_light_feeds_the_back_and_moves_the_optimum_to_a_narrower_front(bifacial_runs):
    """Published trend for bifacial perovskite/silicon tandems (recalled: the energy-optimal
    front gap falls as rear light grows, e.g. De Bastiani et al., Nat. Energy 6 (2021) 167):
    the back's photocurrent rises and the optimum moves to a narrower gap or thicker front."""
    (s_m, mono, design), (s_b, bif, _) = bifacial_runs["mono"], bifacial_runs["bifacial"]
    assert s_b.rear_insolation_kWh_m2 > 0.05 * s_b.insolation_kWh_m2
    i, j = mono.optimum
    h_m = hourly(design, s_m, mono.gaps[i], mono.thicknesses[j], 160e3)
    h_b = hourly(design, s_b, mono.gaps[i], mono.thicknesses[j], 160e3)
    assert np.all(h_b.j_back >= h_m.j_back) and h_b.j_back.sum() > 1.05 * h_m.j_back.sum()
    np.testing.assert_array_equal(h_b.j_front, h_m.j_front)  # the rear light skips the front
    ib, jb = bif.optimum
    assert bif.gaps[ib] < mono.gaps[i] or (bif.gaps[ib] == mono.gaps[i] and
                                           bif.thicknesses[jb] > mono.thicknesses[j])
    assert bif.energy_2t.max() > mono.energy_2t.max()


def test_a_dark_ground_leaves_only_the_rear_sky(bifacial_runs):
    """With albedo 0 the rear still sees part of the sky (pvlib's view factors): a little
    light, far less than with a bright ground."""
    dark, bright = bifacial_runs["dark ground"][0], bifacial_runs["bifacial"][0]
    assert 0 < dark.rear_insolation_kWh_m2 < 0.2 * bright.rear_insolation_kWh_m2


BAD_SITES = {
    "lat": ("Mesa Verdeja,35.2", "Mesa Verdeja,95"),
    "dup": ("Porto Brisa,38.7", "Mesa Verdeja,38.7"),
    "slash": ("Lago Norte", "../Lago Norte"),
    "cols": ("name,latitude", "site,latitude"),
    "weather": ("Etc/GMT+7,\n", "Etc/GMT+7,nowhere.epw\n"),
    "text": ("-106.4", "west"),
}


@pytest.mark.parametrize("case", sorted(BAD_SITES))
def test_bad_site_lists_are_one_line(case, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    old, new = BAD_SITES[case]
    Path("sites.csv").write_text(SITES.replace(old, new, 1))
    res = CliRunner().invoke(app, ["region", "perovskite-wide", "silicon", "--sites", "sites.csv",
                                   "--workers", "1"])
    assert res.exit_code == 2, res.output
    lines = [l for l in res.stderr.strip().splitlines() if l.strip()]
    assert len(lines) == 1 and lines[0].startswith("error:") and "site list" in lines[0], lines
    assert sorted(os.listdir(tmp_path)) == ["sites.csv"]


def test_region_command_writes_its_folder_and_resumes(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    Path("sites.csv").write_text("\n".join(SITES.splitlines()[:3]) + "\n")
    args = ["region", "perovskite-wide", "cigs", "--sites", "sites.csv", "--workers", "1",
            "--period", "day:2026-06-21", "--points", "4", "--json", "-q"]
    first = json.loads(CliRunner().invoke(app, args).stdout)
    assert len(first["computed"]) == 2 and first["resumed"] == []
    assert {Path(p).name for p in first["outputs"]} == {"region.nc", "region.csv", "region.png"}
    second = json.loads(CliRunner().invoke(app, args).stdout)
    assert second["computed"] == [] and len(second["resumed"]) == 2
    assert second["sites"] == first["sites"] or all(
        {k: v for k, v in a.items() if k != "seconds"} == {k: v for k, v in b.items() if k != "seconds"}
        for a, b in zip(first["sites"], second["sites"]))


def test_a_stack_region_site_is_the_stacks_yield_there(tmp_path):
    # Each site of a stack region is the stack's own yield at that site (the same engine and
    # thin-film optics, checked in test_sky_yield), and the job says which stack it ran
    from tandem.design.sky import Site
    from tandem.jobs.region import SiteSpec, region_job, site_year

    job = region_job(None, None, stack="organic-pair", period="day:2026-06-21",
                     thickness_points=3)
    spec = SiteSpec("Porto Brisa", 38.7, -9.1, 50.0, "Etc/GMT-1")
    record = site_year(spec, job)
    site = Site(spec.name, spec.latitude, spec.longitude, spec.altitude_m, 38.7, 180.0, spec.zone)
    series = clear_sky_series(site, parse_period("day:2026-06-21", spec.zone, 60))
    y = tandem.energy_yield_stack("organic-pair", series, others=job.stack.others,
                                  front_thicknesses_nm=job.thicknesses_nm)
    eo = y.summary()["energy_optimum"]
    assert record["energy_2t_kWh_m2"] == pytest.approx(eo["energy_2t_kWh_m2"], abs=5e-4)
    assert record["front_thickness_nm"] == pytest.approx(eo["front_thickness_nm"], abs=0.05)
    result = run_region([spec], job, tmp_path / "r", workers=1)
    summary = result.summary()
    assert summary["stack"] == "organic-pair" and summary["stack_layers_nm"]["origin"] == "AM1.5G-matched"
    # the stack's other layers are part of what a resume must match
    other = replace(job, stack=replace(job.stack, others={k: v * 1.1 for k, v in job.stack.others.items()}))
    assert other.job_fingerprint() != job.job_fingerprint()


@pytest.mark.parametrize("extra, message", [
    (dict(front="perovskite-wide"), "FRONT and BACK with a layer stack"),
    (dict(front_gaps_eV=[1.7]), "front gaps with a layer stack"),
    (dict(rows=Rows()), "bifacial rows with a layer stack")])
def test_a_stack_region_refuses_what_the_stack_sets(extra, message):
    from tandem.jobs.region import region_job

    args = dict(front=None, back=None, stack="organic-pair", others={})
    args.update(extra)
    with pytest.raises(tandem.TandemInputError, match=message):
        region_job(args.pop("front"), args.pop("back"), **args)


@pytest.mark.parametrize("address", ["http://10.0.0.5:8786", "not a url", "inproc://x",
                                     "tcp://", "tcp://host", "tcp://host:99999", "tcp://h:1/path"])
def test_a_bad_scheduler_address_is_one_line_and_leaves_nothing(address, sites, job, tmp_path):
    with pytest.raises(tandem.TandemInputError, match="give tcp://HOST:PORT"):
        run_region(sites, job, tmp_path / "r", scheduler=address)
    assert not (tmp_path / "r").exists()


def test_a_client_of_your_own_streams_the_sites_and_stays_open(sites, rules_job, tmp_path,
                                                               monkeypatch):
    # One site in flight at a time through a cluster the caller opened: every site computed,
    # the same numbers as the serial run, the job sent once, and the client still usable.
    from dask.distributed import Client, LocalCluster

    import tandem.jobs.region_cluster as cluster

    sent, submitted, in_flight, carried = [], [], [], []
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                      dashboard_address=None) as local, Client(local) as client:
        scatter, submit = client.scatter, client.submit

        def counted_scatter(data, **kw):
            sent.append(data)
            return scatter(data, **kw)

        def counted_submit(fn, *args, **kw):
            in_flight.append(sum(f.status == "pending" for f in submitted))
            if len(args) == 3:  # (task, the sites, the job)
                carried.append(len(args[1]))
            future = submit(fn, *args, **kw)
            submitted.append(future)
            return future

        monkeypatch.setattr(client, "scatter", counted_scatter)
        monkeypatch.setattr(client, "submit", counted_submit)
        monkeypatch.setattr(cluster, "SITES_IN_FLIGHT_PER_WORKER", 1)
        streamed = run_region(sites[:3], rules_job, tmp_path / "own", scheduler=client)
        assert client.status == "running"
        assert client.submit(sum, [1, 2]).result() == 3
    serial = run_region(sites[:3], rules_job, tmp_path / "serial", workers=1)
    pd.testing.assert_frame_equal(numbers(streamed), numbers(serial))
    assert len(sent) == 1
    assert sum(str(f.key).startswith("sites_task") for f in submitted) == len(carried)
    # the first task carries one site (its cost unknown), the rest as that cost allows
    assert carried[0] == 1 and sum(carried) == 3
    assert max(in_flight) == 0  # each task went out after the one before it came back


def test_cheap_sites_travel_several_to_a_task_and_dear_ones_alone():
    # dask's cost of a task is spread over sites cheaper than TASK_SECONDS; a site dearer than
    # that (a real site-year: seconds) goes alone, and no task carries more than the maximum
    from tandem.jobs.region_cluster import MAX_SITES_PER_TASK, TASK_SECONDS, sites_per_task

    assert sites_per_task(TASK_SECONDS / 10) == 10
    assert sites_per_task(TASK_SECONDS / 10.5) == 10  # whole sites, never beyond the target
    assert sites_per_task(6.0) == sites_per_task(TASK_SECONDS * 1.01) == 1
    assert sites_per_task(0.0) == sites_per_task(1e-7) == MAX_SITES_PER_TASK


def test_a_cluster_that_goes_away_ends_in_one_line_and_the_run_resumes(sites, rules_job, tmp_path):
    # the scheduler and its worker stop after the first site is stored: one line saying how far
    # the run got, that site kept, and the same command (here serial) finishing the rest
    import dask
    from dask.distributed import Client, LocalCluster

    folder = tmp_path / "r"
    with dask.config.set({"distributed.comm.timeouts.connect": "2s"}):
        local = LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                             dashboard_address=None)
        client = Client(local)

        def stop_after_first(done, total):
            if done == 1:
                local.close()

        try:
            with pytest.raises(tandem.TandemInputError,
                               match=r"stopped answering after 1 of 3 sites .*run the same command again"):
                run_region(sites[:3], rules_job, folder, scheduler=client, progress=stop_after_first)
        finally:
            client.close()
    assert len(stored(folder)) == 1
    resumed = run_region(sites[:3], rules_job, folder, workers=1)
    assert len(resumed.reused) == 1 and len(resumed.computed) == 2


def test_a_cluster_without_workers_gives_up_in_one_line(sites, rules_job, tmp_path, monkeypatch):
    from dask.distributed import Client, LocalCluster

    import tandem.jobs.region_cluster as cluster

    monkeypatch.setattr(cluster, "NO_WORKERS_TIMEOUT_S", 1)
    with LocalCluster(n_workers=0, processes=False, dashboard_address=None) as local, \
            Client(local) as client:
        with pytest.raises(tandem.TandemInputError, match="has had no worker for 1 s; start workers"):
            run_region(sites[:2], rules_job, tmp_path / "r", scheduler=client)
    assert not (tmp_path / "r").exists()  # nothing computed, nothing left behind


def test_ctrl_c_on_a_two_worker_region_is_one_line_and_keeps_the_finished_sites(tmp_path):
    # (a CIGS back: fast closed-form junctions; a month a site keeps sites running when it stops)
    # Ctrl-C reaches the whole process group, the workers too: once each worker printed its own
    # KeyboardInterrupt traceback, and the command printed nothing of its own
    import signal
    import subprocess
    import sys
    import time

    (tmp_path / "s.csv").write_text(SITES)
    run = subprocess.Popen([sys.executable, "-m", "tandem", "region", "perovskite-wide", "cigs",
                            "--sites", "s.csv", "--period", "month:2026-06", "--workers", "2",
                            "--out", "r"], cwd=tmp_path, stdout=subprocess.PIPE,
                           stderr=subprocess.PIPE, start_new_session=True,
                           # a harness started in the background hands down an ignored SIGINT
                           preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL),
                           env={**os.environ, "PYTHONPATH": str(Path(tandem.__file__).parents[1])})
    start = time.monotonic()
    while not stored(tmp_path / "r") and time.monotonic() - start < 240:
        time.sleep(0.1)
    os.killpg(run.pid, signal.SIGINT)  # as a terminal does
    _, err = run.communicate(timeout=300)  # a loaded machine closes its cluster slowly
    lines = [line for line in err.decode().replace("\r", "\n").splitlines() if line.strip()]
    assert run.returncode == 130 and lines[-1:] == ["interrupted"], err.decode()[-3000:]
    assert "Traceback" not in err.decode()
    assert 1 <= len(stored(tmp_path / "r")) < 5


def test_an_unanswering_scheduler_leaves_no_folder_behind(sites, job, tmp_path, monkeypatch):
    import socket

    import tandem.jobs.region_cluster as cluster

    monkeypatch.setattr(cluster, "SCHEDULER_TIMEOUT_S", 2)  # the wait, not the refusal, is long

    with socket.socket() as s:  # a free port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    with pytest.raises(tandem.TandemInputError, match="no dask scheduler answers"):
        run_region(sites[:1], job, tmp_path / "r", scheduler=f"tcp://127.0.0.1:{port}")
    assert not (tmp_path / "r").exists()


def test_a_region_site_outside_the_declared_ranges_says_so(tmp_path):
    from tandem.jobs.region import SiteSpec, region_job, site_year

    spec = SiteSpec("Porto Brisa", 38.7, -9.1, 50.0, "Etc/GMT-1")
    outside = region_job("perovskite-wide", "silicon", OperatingPoint(allow_outside_range=True),
                         front_gaps_eV=[1.5], thickness_points=2, period="day:2026-06-21")
    record = site_year(spec, outside)
    assert record["outside_range"] == "front gap 1.500 eV outside 1.570–1.923 eV"
    inside = region_job("perovskite-wide", "silicon", front_gaps_eV=[1.7], thickness_points=2,
                        period="day:2026-06-21")
    assert site_year(spec, inside)["outside_range"] == ""
    result = run_region([spec], outside, tmp_path / "r", workers=1)
    written = write_region_outputs(result)
    assert any(p.name == "region.nc" for p in written)


def test_a_region_over_ten_minutes_on_its_workers_is_refused_before_any_work(tmp_path):
    """43,681 clear-sky site-years over silicon: about 4e5 s of one core (its yield's measured
    rate and costs); refused in one line, nothing written, --large named."""
    from typer.testing import CliRunner

    from tandem.cli.app import app

    out = tmp_path / "huge"
    res = CliRunner().invoke(app, ["region", "perovskite-wide", "silicon", "--latitudes",
                                   "-60:60:1", "--longitudes", "-180:180:1", "--workers", "2",
                                   "--out", str(out)])
    assert res.exit_code == 2 and len(res.output.strip().splitlines()) == 1
    assert "43,681 sites on 2 local workers" in res.output and "pass --large" in res.output
    assert not out.exists()


def _day_job():
    f, b = tandem.load_absorber("perovskite-wide"), tandem.load_absorber("cigs")
    return RegionJob(f, b, OperatingPoint(), (1.70, 1.76), (500.0, 1000.0), 2000.0,
                     period="day:2026-06-21")


def test_one_run_at_a_time_writes_a_region_folder(sites, tmp_path):
    """A live run's lock refuses a second in one line; a killed run's lock is taken over, and
    the lock is gone when the run ends."""
    import os
    import subprocess
    import sys

    from tandem.core.files import LOCK_NAME

    folder = tmp_path / "region"
    run_region(sites[:1], _day_job(), folder, workers=1)  # a region folder, as a run leaves it
    (folder / LOCK_NAME).write_text(str(os.getppid()))  # a live process that is not us
    with pytest.raises(tandem.TandemInputError, match="being written by another tandem run"):
        run_region(sites[:1], _day_job(), folder, workers=1)
    ended = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                           capture_output=True, text=True).stdout.strip()
    (folder / LOCK_NAME).write_text(ended)  # a run that was killed
    result = run_region(sites[:2], _day_job(), folder, workers=1)
    assert result.computed == [sites[1].name] and not (folder / LOCK_NAME).exists()


def test_an_edited_site_record_is_computed_again(sites, tmp_path):
    import json

    folder = tmp_path / "region"
    first = run_region(sites[:2], _day_job(), folder, workers=1)
    import sqlite3
    from contextlib import closing

    with closing(sqlite3.connect(folder / "sites.sqlite")) as db, db:
        (text,) = db.execute("SELECT record FROM site WHERE name = ?", (sites[0].name,)).fetchone()
        record = json.loads(text)
        record["energy_2t_kWh_m2"] *= 2  # a hand edit (the fingerprint still matches)
        db.execute("UPDATE site SET record = ? WHERE name = ?", (json.dumps(record), sites[0].name))
    again = run_region(sites[:2], _day_job(), folder, workers=1)
    assert again.computed == [sites[0].name] and again.reused == [sites[1].name]
    assert again.to_frame()["energy_2t_kWh_m2"].tolist() == first.to_frame()["energy_2t_kWh_m2"].tolist()


def test_a_region_names_the_content_of_every_input_file_it_read(tmp_path, job):
    import hashlib

    (tmp_path / "r.csv").write_text("wavelength_nm,reflectance\n300,0.05\n1300,0.03\n")
    with_file = replace(job, operating=OperatingPoint(reflectance=str(tmp_path / "r.csv")))
    digests = with_file.input_digests()
    assert digests["input_sha256_reflectance"] == hashlib.sha256(
        (tmp_path / "r.csv").read_bytes()).hexdigest()
    assert digests["job_sha256"] != job.input_digests()["job_sha256"]
    assert set(job.input_digests()) == {"job_sha256"}  # no file, no file digest


def test_the_job_fingerprint_changes_with_every_input(job):
    # a resumed site must share everything its numbers depend on: each field of the job (and
    # the ERE inside an absorber, the operating point) changed alone gives another fingerprint
    changed = {"gaps_eV": (1.62, 1.70), "thicknesses_nm": (300.0, 700.0),
               "back_thickness_nm": 150e3, "period": "month:2026-07", "step_minutes": 30.0,
               "tilt": "20", "albedo": 0.3, "rows": None, "reference": tandem.Light(source="am1.5d"),
               "cell_temperature_K": 320.0, "cover_index": 1.0,
               "operating": OperatingPoint(temperature_K=310.0),
               "front": replace(job.front, ere=1e-3)}
    assert set(changed) | {"back", "stack"} == {f.name for f in fields(job)}
    prints = {name: replace(job, **{name: value}).job_fingerprint() for name, value in changed.items()}
    assert len(set(prints.values()) | {job.job_fingerprint()}) == len(changed) + 1


def stored(folder) -> list[str]:
    """The names of the sites a region folder's store holds (whole records only: a row is
    written in one transaction)."""
    import sqlite3
    from contextlib import closing

    path = Path(folder) / "sites.sqlite"
    if not path.exists():
        return []
    with closing(sqlite3.connect(f"file:{path}?mode=ro", uri=True)) as db:
        # polled while the run starts: the file exists a moment before its table does
        if not db.execute("SELECT 1 FROM sqlite_master WHERE name = 'site'").fetchone():
            return []
        return [row[0] for row in db.execute("SELECT name FROM site")]


def test_two_regions_read_back_concatenate_along_their_periods(sites, tmp_path):
    # the period and the absorbers are scalar coordinates (as attributes, xarray's concat kept
    # the first run's and dropped the other's in silence): two regions written to NetCDF and
    # read back stack along the period, each keeping its own energies
    import dataclasses

    import xarray as xr

    from tandem.jobs.region import write_region_outputs

    summer = _day_job()
    winter = dataclasses.replace(summer, period="day:2026-12-21")
    runs = {}
    for name, job in (("summer", summer), ("winter", winter)):
        runs[name] = run_region(sites[:2], job, tmp_path / name, workers=1)
        write_region_outputs(runs[name])
    read = [xr.open_dataset(tmp_path / name / "region.nc", engine="scipy") for name in runs]
    try:
        both = xr.concat(read, dim="period")
        assert list(both.period.values) == ["day:2026-06-21", "day:2026-12-21"]
        assert str(both.absorbers.values) == "perovskite-wide over cigs"
        for name, period in (("summer", "day:2026-06-21"), ("winter", "day:2026-12-21")):
            np.testing.assert_array_equal(both.energy_2t.sel(period=period).values,
                                          runs[name].to_frame()["energy_2t_kWh_m2"].to_numpy())
        assert np.all(both.energy_2t.sel(period="day:2026-12-21").values
                      != both.energy_2t.sel(period="day:2026-06-21").values)
    finally:
        for ds in read:
            ds.close()



def test_overwrite_clears_the_one_file_a_site_records_of_earlier_releases(sites, tmp_path):
    # tandem 0.3.0 kept a region's records as sites/NAME.json; --overwrite replaces what tandem
    # wrote, so those go too (a file of the user's own in sites/ stays)
    folder = tmp_path / "region"
    run_region(sites[:1], _day_job(), folder, workers=1)
    (folder / "sites").mkdir()
    old = folder / "sites" / "old-site.json"
    from tandem.core.files import STAMP

    old.write_text(json.dumps({"written_by": STAMP, "energy_2t_kWh_m2": 1.0}))
    mine = folder / "sites" / "notes.json"
    mine.write_text('{"mine": true}')
    run_region(sites[:1], _day_job(), folder, workers=1, overwrite=True)
    assert not old.exists() and mine.exists()


def test_a_region_on_several_processes_without_dask_names_the_extra(sites, rules_job, tmp_path,
                                                                    monkeypatch):
    # dask.distributed is the 'region' extra: without it a local cluster or a scheduler is
    # refused in one line before any folder is made, and --workers 1 runs as ever
    from tandem.core.errors import MissingExtra

    monkeypatch.setitem(sys.modules, "distributed", None)  # what a missing package gives
    for kwargs in ({"workers": 2}, {}, {"scheduler": "tcp://127.0.0.1:8786"}):
        with pytest.raises(MissingExtra, match=r"pip install 'tandemcell\[region\]'"):
            run_region(sites[:1], rules_job, tmp_path / "cluster", **kwargs)
        assert not (tmp_path / "cluster").exists()
    assert len(run_region(sites[:1], rules_job, tmp_path / "serial", workers=1).records) == 1
    probe = ("import sys; sys.modules['distributed'] = None; "
             "sys.argv = ['tandem', 'region', 'perovskite-wide', 'cigs', '--sites', sys.argv[1], "
             "'--period', 'day:2026-06-21', '--workers', '2', '--out', sys.argv[2]]; "
             "from tandem.cli import main; main()")
    out = subprocess.run([sys.executable, "-c", probe, str(tmp_path / "sites.csv"),
                          str(tmp_path / "cli")], capture_output=True, text=True, timeout=120)
    assert out.returncode == 2 and "tandemcell[region]" in out.stderr, out.stderr
    assert len(out.stderr.strip().splitlines()) == 1 and not (tmp_path / "cli").exists()


@pytest.mark.parametrize("configured", [True, False])
def test_the_shipped_dask_config_spares_hand_started_workers_the_allocator_setting(
        configured, tmp_path):
    # examples/dask-workers.yaml, as docs/commands.md tells a user to install it: a worker
    # started by hand (`dask worker`, through its nanny) runs without dask's
    # MALLOC_TRIM_THRESHOLD_=65536; without the file it has it (so the check can fail)
    from dask.distributed import Client, LocalCluster

    config = tmp_path / "dask"
    config.mkdir()
    if configured:
        config.joinpath("dask-workers.yaml").write_text(
            (Path(__file__).resolve().parents[1] / "examples" / "dask-workers.yaml").read_text())
    env = {**os.environ, "DASK_CONFIG": str(config), "HOME": str(tmp_path)}
    with LocalCluster(n_workers=0, processes=False, protocol="tcp", host="127.0.0.1",
                      dashboard_address="127.0.0.1:0") as cluster, \
            Client(cluster) as client:
        worker = subprocess.Popen([str(Path(sys.executable).parent / "dask"), "worker",
                                   cluster.scheduler_address, "--nworkers", "1", "--nthreads",
                                   "1", "--no-dashboard"], env=env, stdout=subprocess.DEVNULL,
                                  stderr=subprocess.DEVNULL, start_new_session=True)
        try:
            client.wait_for_workers(1, timeout=60)
            # a lambda, so the worker reads its own environment (a bound os.environ.get would
            # travel with this process's copy)
            seen = set(client.run(lambda: os.environ.get("MALLOC_TRIM_THRESHOLD_")).values())
        finally:
            worker.terminate()
            worker.wait(timeout=60)
    assert seen == ({None} if configured else {"65536"})


def _echo_site(spec, job):
    """A stand-in site: its record names it (what the batching must keep in step)."""
    return {"name": spec, "job": job}


def test_cheap_sites_go_several_to_a_task_and_each_record_reaches_its_own_site(monkeypatch):
    # sites far cheaper than TASK_SECONDS: after the first task (one site) the tasks carry
    # many, and every record comes back to the site it was computed for, each site once
    from dask.distributed import Client, LocalCluster

    from tandem.jobs.region_cluster import MAX_SITES_PER_TASK, _stream_sites

    sites = [f"site-{i:04d}" for i in range(1500)]
    seen, carried = {}, []
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                      dashboard_address="127.0.0.1:0") as cluster, Client(cluster) as client:
        submit = client.submit

        def counted(fn, *args, **kw):
            carried.append(len(args[1]))
            return submit(fn, *args, **kw)

        monkeypatch.setattr(client, "submit", counted)
        _stream_sites(client, sites, "the job", lambda s, r: seen.setdefault(s, []).append(r),
                      _echo_site)
    assert carried[0] == 1 and max(carried) > 1 and max(carried) <= MAX_SITES_PER_TASK
    assert sum(carried) == len(sites) == len(seen)
    assert all(r == [{"name": s, "job": "the job"}] for s, r in seen.items())
