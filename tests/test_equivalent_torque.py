"""Exact equivalent torque from the record's every-step power sums, and the bias bound of the
histogram route for the exponents a record does not hold."""

from __future__ import annotations

import numpy as np
import pytest

from sim import JOINT_NAMES
from sim.loads.mix import mix_of_records
from sim.loads.series import load_series_name
from sim.loads.spectra import (
    equivalent_torque_bounds,
    equivalent_torque_detail,
    equivalent_torque_nm,
    histogram_equivalent_torque_nm,
    spectrum_from_record,
    usage_spectra,
)
from sim.record import open_record

from .synthetic import write_synthetic_record


def _direct(rec, joint, p):
    """Palmgren's mean over the every-step series: [sum |T|^p |w| dt / sum |w| dt]^(1/p)
    (Harris & Kotzalas, Rolling Bearing Analysis; dt cancels)."""
    t = np.abs(rec.read(load_series_name(rec, joint)))  # the load torque series
    w = np.abs(rec.read(f"joints/{joint}/speed_rad_s"))
    return float(((t ** p * w).sum() / w.sum()) ** (1.0 / p))


@pytest.mark.parametrize("p", [3.0, 10.0 / 3.0, 3.333, 9.0])
def test_exact_equivalent_torque_equals_the_every_step_series(trot_records, p):
    with open_record(trot_records["dec1"]) as rec:
        for j in JOINT_NAMES:
            spec = spectrum_from_record(rec, j)
            assert equivalent_torque_detail(spec, p)["route"] == "exact"
            assert equivalent_torque_nm(spec, p) == pytest.approx(_direct(rec, j, p), rel=1e-9)


def test_a_mix_adds_the_power_sums_with_the_weights(trot_records):
    # two records one after the other: the sums over both series
    recs = [trot_records["dec1"], trot_records["chatter"]]
    spec = usage_spectra(mix_of_records(recs), "fl_knee")["fl_knee"]
    t, w = [], []
    for path in recs:
        with open_record(path) as rec:
            t.append(np.abs(rec.read(load_series_name(rec, "fl_knee"))))
            w.append(np.abs(rec.read("joints/fl_knee/speed_rad_s")))
    tt, ww = np.concatenate(t), np.concatenate(w)
    ref = ((tt ** 3 * ww).sum() / ww.sum()) ** (1 / 3)
    assert equivalent_torque_nm(spec, 3.0) == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize("bins", [80, 20])
def test_the_histogram_route_is_low_and_within_its_bound(trot_records, tmp_path, bins):
    # the same every-step series binned coarsely (a synthetic record through the run's writer)
    with open_record(trot_records["dec1"]) as rec:
        dt = float(rec.attrs["time_step_s"])
        tau = {j: rec.read(load_series_name(rec, j)) for j in JOINT_NAMES}
        spd = {j: rec.read(f"joints/{j}/speed_rad_s") for j in JOINT_NAMES}
        peak = max(float(np.abs(x).max()) for x in tau.values()) * 1.0001
    n = len(tau[JOINT_NAMES[0]])

    def series(x):
        return lambda t: x[np.minimum(np.round(t / dt).astype(int), n - 1)]

    path = write_synthetic_record(
        tmp_path / f"b{bins}.h5", n * dt, dt, {j: series(x) for j, x in tau.items()},
        {j: series(x) for j, x in spd.items()},
        torque_edges_nm=np.linspace(-peak, peak, bins + 1),
        speed_edges_rad_s=np.linspace(-40.0, 40.0, 81))
    with open_record(path) as rec:
        for j in JOINT_NAMES:
            spec = spectrum_from_record(rec, j)
            for p in (3.0, 10.0 / 3.0, 9.0):
                exact = _direct(rec, j, p)
                low, up = equivalent_torque_bounds(spec, p)
                assert low == histogram_equivalent_torque_nm(spec, p)
                assert up is not None
                # Jensen: the histogram route is never high; the chord bound is never low
                assert low <= exact * (1 + 1e-12)
                assert exact <= up * (1 + 1e-12)
            # an exponent the record does not hold goes the histogram route, with its bound
            det = equivalent_torque_detail(spec, 2.5)
            assert det["route"] == "histogram"
            assert det["bias_bound"] == pytest.approx(
                equivalent_torque_bounds(spec, 2.5)[1] / det["value"] - 1.0)


def test_a_record_without_power_sums_takes_the_histogram_route(tmp_path):
    import h5py

    path = write_synthetic_record(tmp_path / "s.h5", 1.0, 0.001,
                                  {"fl_knee": lambda t: 10 * np.sin(7 * t)},
                                  {"fl_knee": lambda t: 3 * np.cos(7 * t)})
    with h5py.File(path, "r+") as f:  # as in a format 1 record
        for key in ("power_exponents", "torque_power_angle", "abs_angle_rad"):
            del f["summary/fl_knee"].attrs[key]
    with open_record(path) as rec:
        spec = spectrum_from_record(rec, "fl_knee")
    assert spec.power_sums is None
    assert equivalent_torque_detail(spec, 3.0)["route"] == "histogram"
    assert equivalent_torque_nm(spec, 3.0) == histogram_equivalent_torque_nm(spec, 3.0)
