"""HDF5 run records: the only module that touches h5py.

Over 500 lines on purpose: the only module allowed to touch h5py holds both the streaming
writer and the reader of the one layout.

Layout (format_version 2; documented for users in README.md, "Run record"):

    /time_s                                 [sample]            s
    /joints/<joint>/angle_rad               [sample]            rad
    /joints/<joint>/speed_rad_s             [sample]            rad/s
    /joints/<joint>/torque_nm               [sample]            N m, delivered at the joint output
    /joints/<joint>/torque_command_nm       [sample]            N m, asked for before clamping
    /joints/<joint>/saturated               [sample]            1 where the clamp was active
    /joints/<joint>/gearbox_torque_nm       [sample]            N m, reducer output on the joint
                                            (present when rotors or losses are simulated)
    /joints/<joint>/motor_angle_rad         [sample]            rad, rotor angle / ratio
                                            (present when the joint's mesh is simulated)
    /feet/<leg>/force_n                     [sample, 3]         N, ground on foot, world frame
    /feet/<leg>/contact                     [sample]            1 when the foot touches ground
    /base/position_m                        [sample, 3]         m, base link frame origin
    /base/orientation_xyzw                  [sample, 4]         unit quaternion
    /base/velocity_m_s                      [sample, 3]         m/s, world frame
    /base/angular_velocity_rad_s            [sample, 3]         rad/s, world frame
    /base/external_force_n                  [sample, 3]         N, pushes on the body, world
                                            frame (present when the scenario has [[push]])
    /histograms/<joint>/time_s              [torque_bin, speed_bin]   s at each level, every step
    /histograms/<joint>/revolutions         [torque_bin, speed_bin]   exact sum |speed| dt / 2 pi
    /histograms/<joint>/torque_revolutions_nm [torque_bin, speed_bin] sum torque |speed| dt / 2 pi
    /histograms/<joint>/torque_time_nm_s    [torque_bin, speed_bin]   sum torque dt
    /histograms/<joint>/torque_edges_nm     [torque_bin + 1]
    /histograms/<joint>/speed_edges_rad_s   [speed_bin + 1]
    /summary/<joint>                        attributes: exact per-step statistics, and
        power_exponents [k], torque_power_angle [k] ((N m)^p rad: sum |T|^p |w| dt of the load
        torque over every step, one per exponent p), abs_angle_rad (sum |w| dt): the exact
        equivalent torque is (torque_power_angle / abs_angle_rad)^(1/p)
    /steps/<joint>/torque_nm, speed_rad_s, gearbox_torque_nm   [step]   the duty series every
                                            step, written only when the other series are
                                            decimated (group attributes period_s, start_s)
    /quality                                attributes: the quality screen measured during the
        run: chatter_cutoff_hz, chatter_filter, reversal_deadband_share_of_peak; recorded_s,
        simulated_s, observed_s (time seen at control updates); slip_m and stance_travel_m
        (stance-foot slip and the base travel under the stance feet, summed over feet);
        touchdowns, bounces (lift-off within bounce_window_s of a touchdown); height_screened_s
        and height_error_mean_m / _rms_m / _max_m (base height against the plan in segments
        that hold a height: stand, walk, trot, bound, pronk), height_plan_mean_m (the plan)
    /quality/<joint>                        attributes: torque_reversals_per_s (reversals of
        the sign of the step-to-step change of the load torque, changes below 1e-6 of the
        torque bin range left out), torque_high_frequency_share (RMS of the load torque less
        its zero-phase low-pass at chatter_cutoff_hz over its RMS, over all steps but the
        first and last 0.05 s; NaN if the record is too short)

Sample ``i`` (time ``t_i``): joint and base state at the start of the engine step from ``t_i``
to ``t_i + dt``; torques, contact forces and contact flags over that step.

Histograms and summary describe the load at the reducer output: ``torque_nm`` for a rigid,
lossless reducer, the reducer output torque (``gearbox_torque_nm``) when motor rotors or reducer
losses are simulated (root attribute ``load_torque``, naming the series they follow).

Root attributes: format_version, tool_version, status, status_detail, scenario_toml,
model_toml, drivetrain_toml (the resolved drivetrain, parts inside), drive_notes (what the
simulation leaves out of the drivetrain), time_step_s, sample_period_s, decimation, seed,
engine_version, total_mass_kg,
joint_names, leg_names, axis_convention, planned_s (the scenario's length). Further groups
(phases, events, segments) may be added by the runner with :meth:`RecordWriter.append` and
:meth:`RecordWriter.put`.

Format 1 records (no /quality, no power sums, no /steps) are still read: figures that need
them say so; a decimated format 1 record has no every-step duty series, and the checks that
need every step refuse it (:meth:`RunRecord.duty_unavailable_reason`).

Writing is atomic: data go to a temporary file beside the target, renamed on success.
"""

from __future__ import annotations

import os
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from types import TracebackType
from typing import Any

import h5py
import numpy as np

from sim.core.errors import RecordError
from sim.core.streams import HighFrequencyShare, PowerSums, SignReversals

FORMAT_VERSION = 2
READABLE_VERSIONS = (1, 2)  # format 1: no /quality, no power sums, no /steps (see above)
# life exponents whose exact power sums every record holds: 3 (ball bearings, many reducer
# ratings), 10/3 (roller bearings) and 3.333 (the key `gaitload loads` uses by default)
DEFAULT_LIFE_EXPONENTS: tuple[float, ...] = (3.0, 10.0 / 3.0, 3.333)
CHATTER_CUTOFF_HZ = 100.0  # the control bandwidth above which torque content is chatter
STATUSES = ("completed", "fell", "diverged", "interrupted")
AXIS_CONVENTION = "sample-major: series are [sample] or [sample, component]"

UNITS = {
    "time_s": "s", "angle_rad": "rad", "speed_rad_s": "rad/s", "torque_nm": "N m",
    "torque_command_nm": "N m", "gearbox_torque_nm": "N m", "motor_angle_rad": "rad",
    "force_n": "N",
    "external_force_n": "N", "position_m": "m", "orientation_xyzw": "1",
    "velocity_m_s": "m/s", "angular_velocity_rad_s": "rad/s", "saturated": "1", "contact": "1",
    "torque_edges_nm": "N m", "speed_edges_rad_s": "rad/s", "revolutions": "rev",
    "torque_revolutions_nm": "N m rev", "torque_time_nm_s": "N m s",
}

_CHUNK_ROWS = 4096
# metadata cache of a record opened for reading, in bytes of cache entries (mostly the chunk
# index nodes): fixed and small. HDF5's default cache grows with the chunks touched (up to
# 32 MiB of entries, several times that in memory), so a long chunked read grew with the
# record's length; a sequential read needs only the current index nodes of each dataset.
_READ_METADATA_CACHE_BYTES = 256 * 1024


def chatter_cutoff_hz(dt: float) -> float:
    """Cut-off of the high-frequency share: 100 Hz, or 0.4 / dt when the step is too long
    for 100 Hz to lie well below the Nyquist frequency."""
    return min(CHATTER_CUTOFF_HZ, 0.4 / dt)


def _unit_for(name: str) -> str:
    return UNITS.get(name.rsplit("/", 1)[-1], "")


class RecordWriter:
    """Streams a run into an HDF5 record with flat memory use.

    Series are appended block by block (``append``); histograms and summary statistics are
    accumulated from every simulation step (``accumulate``) whatever the series decimation.
    Use as a context manager; on an exception the temporary file is removed unless
    :meth:`finish` was called.
    """

    def __init__(self, path: str | Path, joint_names: Sequence[str],
                 torque_edges_nm: Mapping[str, np.ndarray],
                 speed_edges_rad_s: Mapping[str, np.ndarray],
                 attrs: Mapping[str, Any], compression: int = 4,
                 compress_floats: bool = False,
                 life_exponents: Sequence[float] = DEFAULT_LIFE_EXPONENTS):
        self.path = Path(path)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.tmp = self.path.with_name(f".{self.path.name}.{os.getpid()}.tmp")
        self.joint_names = list(joint_names)
        self._compression = compression
        # float series are stored uncompressed by default: on a trot record gzip (level 4,
        # shuffle) saved 17 % of the size at 2.8x the write time (measured, 2026-12);
        # integer flags compress to almost nothing and stay gzip-compressed
        self._compress_floats = compress_floats
        self._f = h5py.File(self.tmp, "w", libver=("earliest", "v110"), track_order=False)
        self._done = False
        for k, v in attrs.items():
            self._f.attrs[k] = v
        self._f.attrs["format_version"] = FORMAT_VERSION
        self._f.attrs["axis_convention"] = AXIS_CONVENTION
        self._f.attrs["joint_names"] = np.array(self.joint_names, dtype=h5py.string_dtype())
        self._tedges = {j: np.asarray(torque_edges_nm[j], float) for j in self.joint_names}
        self._sedges = {j: np.asarray(speed_edges_rad_s[j], float) for j in self.joint_names}
        self._hist = {j: np.zeros((len(self._tedges[j]) - 1, len(self._sedges[j]) - 1))
                      for j in self.joint_names}
        self._revs = {j: np.zeros_like(h) for j, h in self._hist.items()}
        self._trevs = {j: np.zeros_like(h) for j, h in self._hist.items()}
        self._ttime = {j: np.zeros_like(h) for j, h in self._hist.items()}
        n = len(self.joint_names)
        self._peak_t = np.zeros(n)
        self._peak_w = np.zeros(n)
        self._peak_ms = np.zeros(n)
        self._sum_t2 = np.zeros(n)
        self._sum_t = np.zeros(n)
        self._sat = np.zeros(n)
        self._overflow = np.zeros(n)
        self._steps = 0
        self._dt_total = 0.0
        # every-step screen and moments (sim.core.streams), fed with each block of steps
        exps = sorted(set(float(p) for p in life_exponents))
        self._powers = PowerSums(n, exps)
        self._reversals = SignReversals(n, [1e-6 * float(np.abs(self._tedges[j]).max())
                                            for j in self.joint_names])
        self._hf: HighFrequencyShare | None = None  # made at the first block (needs dt)

    # -- series -----------------------------------------------------------------------------
    def append(self, name: str, data: np.ndarray, dtype: str = "f8") -> None:
        """Append rows to dataset ``name`` (created on first use, chunked and compressed)."""
        data = np.asarray(data, dtype=dtype)
        if name in self._f:
            ds = self._f[name]
            n0 = ds.shape[0]
            ds.resize(n0 + data.shape[0], axis=0)
            ds[n0:] = data
        else:
            chunks = (min(_CHUNK_ROWS, max(1, data.shape[0])), *data.shape[1:])
            filters: dict[str, Any] = {}
            if data.dtype.kind != "f" or self._compress_floats:
                filters = {"compression": "gzip", "compression_opts": self._compression,
                           "shuffle": True}
            ds = self._f.create_dataset(
                name, data=data, maxshape=(None, *data.shape[1:]), chunks=chunks,
                track_times=False, **filters)
            unit = _unit_for(name)
            if unit:
                ds.attrs["unit"] = unit
        # write the cached chunks now: file space is then allocated in the order of the calls,
        # not in the order dataset handles happen to be released, so records are bit-identical
        ds.flush()

    def put_attrs(self, group: str, attrs: Mapping[str, Any]) -> None:
        """Set attributes on group ``group`` (created if needed)."""
        g = self._f.require_group(group)
        for k, v in attrs.items():
            g.attrs[k] = v

    def put(self, name: str, data: Any, **attrs: Any) -> None:
        """Write a small fixed dataset (events, segment tables) in one go."""
        arr = np.asarray(data)
        if arr.dtype.kind == "U":
            arr = arr.astype(h5py.string_dtype())
        ds = self._f.create_dataset(name, data=arr, track_times=False)
        unit = _unit_for(name)
        if unit:
            ds.attrs["unit"] = unit
        for k, v in attrs.items():
            ds.attrs[k] = v

    # -- every-step statistics --------------------------------------------------------------
    def accumulate(self, torque_nm: np.ndarray, speed_rad_s: np.ndarray,
                   saturated: np.ndarray, dt: float,
                   motor_side_torque_nm: np.ndarray | None = None) -> None:
        """Add a block of steps, ``[step, joint]`` arrays, each step lasting ``dt`` seconds.

        ``torque_nm`` is the load the joint carries at the reducer output (what histograms and
        summary describe); ``motor_side_torque_nm``, when rotors or reducer losses make it
        differ, is the motor torque times the ratio, of which only the peak is kept.
        """
        t = np.asarray(torque_nm, float)
        w = np.asarray(speed_rad_s, float)
        if t.size == 0:
            return
        ms = t if motor_side_torque_nm is None else np.asarray(motor_side_torque_nm, float)
        np.maximum(self._peak_ms, np.abs(ms).max(axis=0), out=self._peak_ms)
        self._steps += t.shape[0]
        self._dt_total += dt * t.shape[0]
        np.maximum(self._peak_t, np.abs(t).max(axis=0), out=self._peak_t)
        np.maximum(self._peak_w, np.abs(w).max(axis=0), out=self._peak_w)
        self._sum_t2 += (t * t).sum(axis=0) * dt
        self._sum_t += t.sum(axis=0) * dt
        self._sat += np.asarray(saturated, float).sum(axis=0) * dt
        self._powers.feed(t, w, dt)
        self._reversals.feed(t)
        if self._hf is None:
            self._hf = HighFrequencyShare(t.shape[1], dt, chatter_cutoff_hz(dt))
        self._hf.feed(t)
        for k, j in enumerate(self.joint_names):
            te, se = self._tedges[j], self._sedges[j]
            it = np.clip(np.searchsorted(te, t[:, k], side="right") - 1, 0, len(te) - 2)
            iw = np.clip(np.searchsorted(se, w[:, k], side="right") - 1, 0, len(se) - 2)
            out = ((t[:, k] < te[0]) | (t[:, k] > te[-1]) | (w[:, k] < se[0]) | (w[:, k] > se[-1]))
            self._overflow[k] += out.sum() * dt
            nbin_w = len(se) - 1
            flat = it * nbin_w + iw
            counts = np.bincount(flat, minlength=self._hist[j].size)
            self._hist[j] += counts.reshape(self._hist[j].shape) * dt
            revs = np.bincount(flat, weights=np.abs(w[:, k]), minlength=self._hist[j].size)
            self._revs[j] += revs.reshape(self._hist[j].shape) * (dt / (2.0 * np.pi))
            trev = np.bincount(flat, weights=t[:, k] * np.abs(w[:, k]),
                               minlength=self._hist[j].size)
            self._trevs[j] += trev.reshape(self._hist[j].shape) * (dt / (2.0 * np.pi))
            ttime = np.bincount(flat, weights=t[:, k], minlength=self._hist[j].size)
            self._ttime[j] += ttime.reshape(self._hist[j].shape) * dt

    # -- closing ----------------------------------------------------------------------------
    def finish(self, status: str, detail: str = "", **attrs: Any) -> Path:
        """Write histograms, summary and status, close and rename into place."""
        if status not in STATUSES:
            raise ValueError(f"status must be one of {STATUSES}")
        f = self._f
        dur = self._dt_total
        shares = None if self._hf is None else self._hf.shares()
        g = f.require_group("quality")
        g.attrs["chatter_cutoff_hz"] = np.nan if self._hf is None else self._hf.cutoff_hz
        g.attrs["chatter_filter"] = ("centred (zero-phase) windowed-sinc FIR low-pass, Hamming "
                                     "window, 2 x 0.05 s long; the first and last 0.05 s left "
                                     "out (sim.core.streams.HighFrequencyShare)")
        g.attrs["reversal_deadband_share_of_peak"] = 1e-6
        for k, j in enumerate(self.joint_names):
            g = f.require_group(f"histograms/{j}")
            for name, arr in (("time_s", self._hist[j]), ("revolutions", self._revs[j]),
                              ("torque_revolutions_nm", self._trevs[j]),
                              ("torque_time_nm_s", self._ttime[j]),
                              ("torque_edges_nm", self._tedges[j]),
                              ("speed_edges_rad_s", self._sedges[j])):
                ds = g.create_dataset(name, data=arr, track_times=False)
                ds.attrs["unit"] = _unit_for(name)
            g["time_s"].attrs["axes"] = "[torque_bin, speed_bin]"
            for name in ("revolutions", "torque_revolutions_nm", "torque_time_nm_s"):
                g[name].attrs["axes"] = "[torque_bin, speed_bin]"
            g.attrs["overflow_s"] = self._overflow[k]
            s = f.require_group(f"summary/{j}")
            s.attrs["peak_torque_nm"] = self._peak_t[k]
            s.attrs["rms_torque_nm"] = np.sqrt(self._sum_t2[k] / dur) if dur > 0 else 0.0
            s.attrs["mean_torque_nm"] = self._sum_t[k] / dur if dur > 0 else 0.0
            s.attrs["peak_motor_side_torque_nm"] = self._peak_ms[k]
            s.attrs["peak_speed_rad_s"] = self._peak_w[k]
            s.attrs["saturated_s"] = self._sat[k]
            s.attrs["duration_s"] = dur
            s.attrs["power_exponents"] = np.array(self._powers.exponents)
            s.attrs["torque_power_angle"] = self._powers.power[:, k]
            s.attrs["abs_angle_rad"] = self._powers.weight[k]
            q = f.require_group(f"quality/{j}")
            q.attrs["torque_reversals_per_s"] = (self._reversals.count[k] / dur if dur > 0
                                                 else 0.0)
            q.attrs["torque_high_frequency_share"] = (np.nan if shares is None
                                                      else shares[k])
        f.attrs["status"] = status
        f.attrs["status_detail"] = detail
        f.attrs["steps"] = self._steps
        for name, value in attrs.items():
            f.attrs[name] = value
        f.close()
        os.replace(self.tmp, self.path)
        self._done = True
        return self.path

    def abort(self) -> None:
        """Close and delete the temporary file (nothing is left behind)."""
        try:
            self._f.close()
        finally:
            self.tmp.unlink(missing_ok=True)
            self._done = True

    def __enter__(self) -> RecordWriter:
        return self

    def __exit__(self, et: type[BaseException] | None, ev: BaseException | None,
                 tb: TracebackType | None) -> None:
        if not self._done:
            self.abort()


@dataclass(frozen=True)
class JointSummary:
    """Exact every-step statistics of one joint. Torques are the load at the reducer output
    (``gearbox_torque_nm`` when rotors or reducer losses are simulated, else ``torque_nm``);
    ``peak_motor_side_torque_nm`` is the peak of motor torque x ratio."""

    peak_torque_nm: float
    peak_motor_side_torque_nm: float
    rms_torque_nm: float
    mean_torque_nm: float
    peak_speed_rad_s: float
    saturated_s: float
    duration_s: float


def _fix_metadata_cache(f: h5py.File, size: int) -> None:
    """Give ``f`` a metadata cache of ``size`` bytes that does not grow (adaptive increase off)."""
    c = f.id.get_mdc_config()
    c.set_initial_size = True
    c.initial_size = size
    c.max_size = size
    c.min_size = min(c.min_size, size)
    c.incr_mode = 0  # H5C_incr__off
    c.flash_incr_mode = 0  # H5C_flash_incr__off
    f.id.set_mdc_config(c)


class RunRecord:
    """Read access to a record. Use :func:`open_record`; arrays are read on demand."""

    def __init__(self, path: str | Path):
        self.path = Path(path)
        self._attrs: dict[str, Any] | None = None
        if not self.path.is_file():
            raise RecordError(str(self.path), None, "an existing run record (no such file)")
        try:
            self._f = h5py.File(self.path, "r")
        except OSError:
            raise RecordError(str(self.path), None, "an HDF5 run record written by gaitload") from None
        _fix_metadata_cache(self._f, _READ_METADATA_CACHE_BYTES)
        ver = self._f.attrs.get("format_version")
        if ver is None:
            self._f.close()
            raise RecordError(str(self.path), "format_version",
                              "a gaitload run record (attribute missing)")
        if int(ver) not in READABLE_VERSIONS:
            self._f.close()
            raise RecordError(str(self.path), "format_version", "format version "
                              + " or ".join(str(v) for v in READABLE_VERSIONS), int(ver))
        self.format_version = int(ver)

    # metadata
    @property
    def attrs(self) -> dict[str, Any]:
        """Root attributes as plain Python values (read once: the file is open read-only)."""
        if self._attrs is None:
            self._attrs = self._read_attrs()
        return dict(self._attrs)

    def _read_attrs(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for k, v in self._f.attrs.items():
            if isinstance(v, bytes):
                v = v.decode()
            elif isinstance(v, np.ndarray) and v.dtype.kind in "OS":
                v = [x.decode() if isinstance(x, bytes) else str(x) for x in v]
            elif isinstance(v, np.generic):
                v = v.item()
            out[k] = v
        return out

    @property
    def status(self) -> str:
        return str(self.attrs["status"])

    @property
    def joint_names(self) -> list[str]:
        if self._attrs is None:
            self._attrs = self._read_attrs()
        return list(self._attrs["joint_names"])

    @property
    def n_samples(self) -> int:
        return int(self._f["time_s"].shape[0]) if "time_s" in self._f else 0

    @property
    def duration_s(self) -> float:
        """Simulated time covered by the every-step statistics."""
        j = self.joint_names[0]
        return float(self._f[f"summary/{j}"].attrs["duration_s"])

    def has(self, name: str) -> bool:
        return name in self._f

    def require_completed(self, allow_failed: bool = False) -> None:
        if self.status != "completed" and not allow_failed:
            raise RecordError(str(self.path), "status",
                              "a completed run (use --allow-failed to read it anyway)",
                              self.status)

    def check_joint(self, joint: str) -> None:
        if joint not in self.joint_names:
            raise RecordError(str(self.path), joint,
                              "a joint of this record: " + ", ".join(self.joint_names))

    # data
    def read(self, name: str, start: int = 0, stop: int | None = None) -> np.ndarray:
        """Read a dataset (or a row range of it) into memory."""
        if name not in self._f:
            raise RecordError(str(self.path), name, "this dataset in the record (missing)")
        ds = self._f[name]
        if ds.ndim == 0:
            return np.asarray(ds[()])
        return np.asarray(ds[start:stop])

    def series(self, joint: str, quantity: str) -> np.ndarray:
        """``quantity`` is angle_rad, speed_rad_s, torque_nm, torque_command_nm or saturated."""
        self.check_joint(joint)
        return self.read(f"joints/{joint}/{quantity}")

    def iter_chunks(self, names: Sequence[str], rows: int = 262144, reuse: bool = False
                    ) -> Iterator[tuple[int, list[np.ndarray]]]:
        """Yield ``(start_row, [array per name])`` over the rows of ``names`` (series of one
        length: the sampled series, or the every-step duty series), ``rows`` at a time.

        With ``reuse`` the arrays are views of buffers read into again at the next step (valid
        until then): memory then holds one chunk, not the one being read plus the previous.
        """
        for name in names:
            if name not in self._f:
                raise RecordError(str(self.path), name, "this dataset in the record (missing)")
        lengths = {int(self._f[nm].shape[0]) for nm in names}
        if len(lengths) > 1:
            raise RecordError(str(self.path), ", ".join(names), "series of one length")
        n = lengths.pop() if lengths else 0
        if not reuse:
            for start in range(0, n, rows):
                yield start, [np.asarray(self._f[nm][start:start + rows]) for nm in names]
            return
        bufs: list[np.ndarray] = []
        for start in range(0, n, rows):
            m = min(rows, n - start)
            out = []
            for k, nm in enumerate(names):
                ds = self._f[nm]
                if k == len(bufs):
                    bufs.append(np.empty((min(rows, n), *ds.shape[1:]), dtype=ds.dtype))
                ds.read_direct(bufs[k], np.s_[start:start + m], np.s_[0:m])
                out.append(bufs[k][:m])
            yield start, out

    def histogram(self, joint: str) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """``(time_s, revolutions, torque_edges_nm, speed_edges_rad_s)``.

        ``time_s`` and ``revolutions`` are ``[torque_bin, speed_bin]``; revolutions are the
        exact per-step sums of |speed| dt / 2 pi falling in each bin (not bin centres).
        """
        self.check_joint(joint)
        g = self._f[f"histograms/{joint}"]
        return (np.asarray(g["time_s"]), np.asarray(g["revolutions"]),
                np.asarray(g["torque_edges_nm"]), np.asarray(g["speed_edges_rad_s"]))

    def histogram_moments(self, joint: str) -> tuple[np.ndarray, np.ndarray]:
        """``(torque_revolutions_nm, torque_time_nm_s)``, each ``[torque_bin, speed_bin]``.

        Divided by ``revolutions`` or ``time_s`` they give the exact mean torque inside each
        bin (revolution- or time-weighted), removing most of the binning error.
        """
        self.check_joint(joint)
        g = self._f[f"histograms/{joint}"]
        return np.asarray(g["torque_revolutions_nm"]), np.asarray(g["torque_time_nm_s"])

    def summary(self, joint: str) -> JointSummary:
        self.check_joint(joint)
        a = self._f[f"summary/{joint}"].attrs
        return JointSummary(**{k: float(a[k]) for k in JointSummary.__dataclass_fields__})

    def power_sums(self, joint: str) -> tuple[dict[float, float], float] | None:
        """``({p: sum |T|^p |w| dt}, sum |w| dt)`` of the load torque over every step, or None
        (records of format 1)."""
        self.check_joint(joint)
        a = self._f[f"summary/{joint}"].attrs
        if "power_exponents" not in a:
            return None
        return ({float(p): float(v) for p, v in zip(a["power_exponents"],
                                                     a["torque_power_angle"], strict=True)},
                float(a["abs_angle_rad"]))

    def group_attrs(self, name: str) -> dict[str, Any] | None:
        """Attributes of group ``name`` as plain values, or None if the record has none."""
        if name not in self._f:
            return None
        out: dict[str, Any] = {}
        for k, v in self._f[name].attrs.items():
            out[k] = v.decode() if isinstance(v, bytes) else (
                v.item() if isinstance(v, np.generic) else v)
        return out

    # every-step duty series (joint torque, reducer output torque, joint speed)
    @property
    def has_step_series(self) -> bool:
        """True if the record keeps a separate every-step copy of the duty series (``/steps``:
        written when the other series are decimated)."""
        return "steps" in self._f

    def duty_name(self, joint: str, quantity: str) -> str:
        """Dataset of an every-step duty series (``torque_nm``, ``gearbox_torque_nm``,
        ``speed_rad_s``): ``steps/<joint>/<quantity>`` in a decimated record, else
        ``joints/<joint>/<quantity>``."""
        return f"{'steps' if self.has_step_series else 'joints'}/{joint}/{quantity}"

    @property
    def duty_period_s(self) -> float:
        """Time between the rows of the duty series (the simulation step when kept every step)."""
        a = self.attrs
        if self.has_step_series:
            return float(a["time_step_s"])
        return float(a.get("sample_period_s") or a["time_step_s"])

    @property
    def duty_length(self) -> int:
        """Rows of the duty series (0 when the record holds histograms only)."""
        name = self.duty_name(self.joint_names[0], "speed_rad_s")
        return int(self._f[name].shape[0]) if name in self._f else 0

    def require_duty_series(self) -> None:
        """Raise :class:`RecordError` if the record lacks every-step duty series although it
        has series (see :meth:`duty_unavailable_reason`)."""
        reason = self.duty_unavailable_reason()
        if reason:
            raise RecordError(str(self.path), "decimation", reason)

    def duty_unavailable_reason(self) -> str | None:
        """Why this record has no every-step duty series (a decimated format-1 record), or
        None. Figures built from series need every step: fewer samples miss peaks and cycles
        and would make the figures look safer than the run was."""
        dec = int(self.attrs.get("decimation", 1) or 1)
        if dec > 1 and not self.has_step_series:
            return (f"the record's series are decimated (record.decimation = {dec}) and it has "
                    f"no every-step duty series (format {self.format_version}); rainflow, "
                    "damage, peak events, motor, winding and battery figures need every "
                    "step: re-run the scenario with this version of gaitload (which keeps "
                    "the duty series every step at any decimation) or with "
                    "record.decimation = 1")
        return None

    def close(self) -> None:
        self._f.close()

    def __enter__(self) -> RunRecord:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def open_record(path: str | Path) -> RunRecord:
    """Open a run record for reading; raises :class:`RecordError` if it is not one."""
    return RunRecord(path)
