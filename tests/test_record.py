"""Run records: round trip through plain h5py, atomic writes, every-step histograms."""

from __future__ import annotations

import h5py
import numpy as np
import pytest

from sim.core.errors import RecordError
from sim.record import RecordWriter, open_record

from .synthetic import write_synthetic_record


def test_round_trip_with_plain_h5py(tmp_path):
    rng = np.random.default_rng(3)
    t = np.arange(5000) * 1e-3
    tau = rng.normal(0, 5, (5000, 2))
    w = rng.normal(0, 3, (5000, 2))
    edges = np.linspace(-30, 30, 61)
    out = tmp_path / "r.h5"
    with RecordWriter(out, ["a_knee", "b_knee"], {"a_knee": edges, "b_knee": edges},
                      {"a_knee": edges, "b_knee": edges}, {"tool_version": "t"}) as wr:
        for s in range(0, 5000, 1200):
            wr.append("time_s", t[s:s + 1200])
            wr.append("joints/a_knee/torque_nm", tau[s:s + 1200, 0])
            wr.append("feet/fl/force_n", np.column_stack([tau[s:s + 1200]] * 2)[:, :3])
            wr.accumulate(tau[s:s + 1200], w[s:s + 1200], np.zeros((len(t[s:s + 1200]), 2)),
                          1e-3)
        wr.finish("completed", "ok")
    with h5py.File(out, "r") as f:  # plain h5py, no gaitload code
        np.testing.assert_array_equal(f["time_s"][:], t)
        np.testing.assert_array_equal(f["joints/a_knee/torque_nm"][:], tau[:, 0])
        assert f["feet/fl/force_n"].shape == (5000, 3)
        assert f["joints/a_knee/torque_nm"].attrs["unit"] == "N m"
        assert f.attrs["status"] == "completed"
        h = f["histograms/a_knee/time_s"][:]
        # every step lands in the histogram: total time equals 5000 steps x 1 ms
        assert h.sum() == pytest.approx(5.0, rel=1e-12)
        # against numpy's own 2-D histogram (an outside implementation of the binning)
        ref, _, _ = np.histogram2d(tau[:, 0], w[:, 0], bins=[edges, edges])
        np.testing.assert_allclose(h, ref * 1e-3, atol=1e-12)
        rms = f["summary/b_knee"].attrs["rms_torque_nm"]
        assert rms == pytest.approx(np.sqrt(np.mean(tau[:, 1] ** 2)), rel=1e-12)
    assert not list(tmp_path.glob(".*tmp"))


def test_aborted_writer_leaves_nothing(tmp_path):
    out = tmp_path / "x.h5"
    e = np.linspace(-1, 1, 3)
    with pytest.raises(RuntimeError), RecordWriter(out, ["j"], {"j": e}, {"j": e}, {}) as w:
        w.append("time_s", np.zeros(10))
        raise RuntimeError("boom")
    assert list(tmp_path.iterdir()) == []


def test_reader_refuses_other_format_version(tmp_path):
    p = write_synthetic_record(tmp_path / "r.h5", 0.1)
    with h5py.File(p, "a") as f:
        f.attrs["format_version"] = 99
    with pytest.raises(RecordError, match="format version 1"):
        open_record(p)


def test_reader_refuses_failed_run_unless_allowed(tmp_path):
    p = write_synthetic_record(tmp_path / "r.h5", 0.1, status="fell")
    with open_record(p) as rec:
        with pytest.raises(RecordError, match="completed run"):
            rec.require_completed()
        rec.require_completed(allow_failed=True)


def test_atomic_text_and_bytes_writers_leave_no_half_file(tmp_path):
    from sim.core.atomic import write_bytes_atomic, write_text_atomic

    p = write_text_atomic(tmp_path / "a" / "x.csv", "t,x\n0,1\n")
    assert p.read_text() == "t,x\n0,1\n"
    with pytest.raises(TypeError):
        write_bytes_atomic(tmp_path / "a" / "y.bin", "not bytes")  # type: ignore[arg-type]
    assert sorted(q.name for q in (tmp_path / "a").iterdir()) == ["x.csv"]
