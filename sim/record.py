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

import math
import os
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from types import TracebackType
from typing import Any

import h5py
import numpy as np

from sim.core.atomic import create_temp, forget_temp, same_file
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
        # an exclusive new temporary file beside the target (never through a planted name or
        # symlink; stale ones of killed runs removed), checked to be the file h5py then opens
        fd, self.tmp = create_temp(self.path)
        self.joint_names = list(joint_names)
        self._compression = compression
        # float series are stored uncompressed by default: on a trot record gzip (level 4,
        # shuffle) saved 17 % of the size at 2.8x the write time (measured, 2026-12);
        # integer flags compress to almost nothing and stay gzip-compressed
        self._compress_floats = compress_floats
        try:
            self._f = h5py.File(self.tmp, "w", libver=("earliest", "v110"), track_order=False)
            if not same_file(fd, self.tmp):
                self._f.close()
                raise RecordError(str(self.tmp), None, "the temporary file gaitload created "
                                  "(it was replaced while being opened)")
        except BaseException:
            self.tmp.unlink(missing_ok=True)
            forget_temp(self.tmp)
            raise
        finally:
            os.close(fd)
        self._done = False
        self.replaced_existing = True  # False when finish() left an existing file in place
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
        """Write histograms, summary and status, close and rename into place.

        An ``interrupted`` record never replaces a file already at the target (a completed
        record of an earlier run stays): it goes to :func:`partial_path` of the target
        instead, and ``replaced_existing`` is False. The path written is returned.
        """
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
        target = self.path
        if status == "interrupted" and os.path.lexists(target):
            target = partial_path(self.path)
            self.replaced_existing = False
        os.replace(self.tmp, target)
        forget_temp(self.tmp)
        self._done = True
        return target

    def abort(self) -> None:
        """Close and delete the temporary file (nothing is left behind)."""
        try:
            self._f.close()
        finally:
            self.tmp.unlink(missing_ok=True)
            forget_temp(self.tmp)
            self._done = True

    def __enter__(self) -> RecordWriter:
        return self

    def __exit__(self, et: type[BaseException] | None, ev: BaseException | None,
                 tb: TracebackType | None) -> None:
        if not self._done:
            self.abort()


def partial_path(path: str | Path) -> Path:
    """Where an interrupted run's record goes when a file is already at ``path``:
    ``<stem>.interrupted<suffix>`` beside it."""
    p = Path(path)
    return p.with_name(f"{p.stem}.interrupted{p.suffix or '.h5'}")


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


# -- checking a record read from a file ------------------------------------------------------
# Records are shared between people: every item a reader uses is checked when the record is
# opened (RunRecord), so a missing attribute or dataset, a wrong type or shape, a hostile name
# or a link into another file is one RecordError naming the record and the item, never a
# KeyError or ValueError later on. Names that reach paths and titles follow
# sim.core.paths.NAME_PATTERN.

_MAX_OBJECTS = 100_000  # a record of 12 joints holds about 200; more is not a run record
_HIST_SETS = ("time_s", "revolutions")
_HIST_MOMENTS = ("torque_revolutions_nm", "torque_time_nm_s")
_SUMMARY_KEYS = ("peak_torque_nm", "peak_motor_side_torque_nm", "rms_torque_nm",
                 "mean_torque_nm", "peak_speed_rad_s", "saturated_s", "duration_s")
_ROOT_NUMBERS = ("planned_s", "simulated_s", "total_mass_kg", "record_start_s", "steps")
_LOAD_TORQUES = ("torque_nm", "gearbox_torque_nm")


def _plain(v: Any) -> Any:
    if isinstance(v, bytes):
        return v.decode("utf-8", "replace")
    if isinstance(v, np.ndarray) and v.dtype.kind in "OSU":
        return [x.decode("utf-8", "replace") if isinstance(x, bytes) else str(x)
                for x in v.reshape(-1)]
    if isinstance(v, np.generic):
        return v.item()
    return v


def _read_plain_attrs(f: h5py.File, path: str, group: str) -> dict[str, Any]:
    """Attributes of ``group`` ("" for the root) as plain Python values."""
    out: dict[str, Any] = {}
    node = f[group] if group else f
    try:
        for k in node.attrs:
            out[k] = _plain(node.attrs[k])
    except (OSError, ValueError, TypeError, KeyError) as exc:
        raise RecordError(path, f"/{group} attributes", f"readable attributes ({exc})") from None
    return out


def _is_number(v: Any) -> bool:
    return isinstance(v, int | float | np.integer | np.floating) and not isinstance(v, bool)


def _check_version(f: h5py.File, path: str) -> int:
    try:
        ver = f.attrs.get("format_version")
    except (OSError, ValueError, TypeError) as exc:
        raise RecordError(path, "format_version", f"a readable attribute ({exc})") from None
    if ver is None:
        raise RecordError(path, "format_version", "a gaitload run record (attribute missing)")
    ver = _plain(ver)
    if not (_is_number(ver) and float(ver).is_integer()):
        raise RecordError(path, "format_version", "an integer format version", ver)
    if int(ver) not in READABLE_VERSIONS:
        raise RecordError(path, "format_version", "format version "
                          + " or ".join(str(v) for v in READABLE_VERSIONS), int(ver))
    return int(ver)


def _check_links(f: h5py.File, path: str) -> None:
    """Only hard links, no external or virtual storage: a record never reads another file."""
    count = 0

    def walk(group: h5py.Group, prefix: str) -> None:
        nonlocal count
        for name in group:
            count += 1
            full = f"{prefix}{name}"
            if count > _MAX_OBJECTS:
                raise RecordError(path, None, f"a run record (more than {_MAX_OBJECTS} objects)")
            link = group.get(name, getlink=True)
            if not isinstance(link, h5py.HardLink):
                raise RecordError(path, full, "an object stored in the record (it is a "
                                  f"{type(link).__name__} to somewhere else)")
            obj = group.get(name)
            if isinstance(obj, h5py.Group):
                walk(obj, full + "/")
            elif isinstance(obj, h5py.Dataset):
                if obj.is_virtual or obj.external:
                    raise RecordError(path, full, "data stored in the record (it points to "
                                      "data in another file)")
            else:
                raise RecordError(path, full, "a group or dataset")

    try:
        walk(f, "")
    except RecordError:
        raise
    except (OSError, ValueError, TypeError, KeyError) as exc:
        raise RecordError(path, None, f"a readable HDF5 layout ({exc})") from None


def _dataset(f: h5py.File, path: str, name: str, ndim: int | None = None,
             shape: tuple[int | None, ...] | None = None,
             required: bool = True) -> h5py.Dataset | None:
    """The numeric dataset ``name``, checked for kind and shape (None entries match any)."""
    if name not in f:
        if required:
            raise RecordError(path, name, "this dataset in the record (missing)")
        return None
    ds = f[name]
    if not isinstance(ds, h5py.Dataset):
        raise RecordError(path, name, "a dataset (it is a group)")
    if ds.dtype.kind not in "fiub":
        raise RecordError(path, name, "a numeric dataset", str(ds.dtype))
    want = shape if shape is not None else None
    if ndim is not None and ds.ndim != ndim:
        raise RecordError(path, name, f"a dataset of {ndim} dimension(s)", tuple(ds.shape))
    if want is not None and (len(want) != ds.ndim or any(
            w is not None and w != g for w, g in zip(want, ds.shape, strict=True))):
        shown = tuple("n" if w is None else w for w in want)
        raise RecordError(path, name, f"shape {shown}", tuple(ds.shape))
    return ds


def _small_finite(ds: h5py.Dataset, path: str, name: str) -> np.ndarray:
    """Read a small (histogram-sized) dataset and check its values are finite."""
    if ds.size > 50_000_000:
        raise RecordError(path, name, "a histogram of at most 5e7 bins", int(ds.size))
    try:
        a = np.asarray(ds[()], float)
    except (OSError, ValueError, TypeError) as exc:
        raise RecordError(path, name, f"a readable dataset ({exc})") from None
    if not np.isfinite(a).all():
        raise RecordError(path, name, "finite values (it holds NaN or infinity)")
    return a


def _check_root(attrs: dict[str, Any], path: str) -> None:
    from sim.core.paths import NAME_RULE, is_safe_name

    if "status" not in attrs:
        raise RecordError(path, "status", "this root attribute (missing)")
    if attrs["status"] not in STATUSES:
        raise RecordError(path, "status", "one of " + ", ".join(STATUSES), attrs["status"])
    names = attrs.get("joint_names")
    if names is None:
        raise RecordError(path, "joint_names", "this root attribute (missing)")
    if isinstance(names, str) or not isinstance(names, list) or not names:
        raise RecordError(path, "joint_names", "a non-empty list of joint names",
                          type(names).__name__)
    legs = attrs.get("leg_names", [])
    if isinstance(legs, str) or not isinstance(legs, list):
        raise RecordError(path, "leg_names", "a list of leg names", type(legs).__name__)
    for key, values in (("joint_names", names), ("leg_names", legs)):
        for i, n in enumerate(values):
            if not is_safe_name(n):
                raise RecordError(path, f"{key}[{i}]", NAME_RULE, str(n)[:100])
    if len(set(names)) != len(names):
        raise RecordError(path, "joint_names", "each joint named once", names)
    for key in ("time_step_s", "sample_period_s"):
        v = attrs.get(key)
        if v is None and key == "time_step_s":
            raise RecordError(path, key, "this root attribute (missing)")
        if v is not None and not (_is_number(v) and math.isfinite(v) and 0 < v <= 1.0):
            raise RecordError(path, key, "a time step in seconds, > 0 and <= 1", v)
    dec = attrs.get("decimation", 1)
    if not (_is_number(dec) and float(dec).is_integer() and 1 <= dec <= 10**9):
        raise RecordError(path, "decimation", "an integer >= 1", dec)
    if attrs.get("load_torque", "torque_nm") not in _LOAD_TORQUES:
        raise RecordError(path, "load_torque", "one of " + ", ".join(_LOAD_TORQUES),
                          attrs.get("load_torque"))
    for key in _ROOT_NUMBERS:
        v = attrs.get(key)
        if v is not None and not (_is_number(v) and math.isfinite(v) and v >= 0):
            raise RecordError(path, key, "a finite number >= 0", v)
    for key in ("status_detail", "scenario_toml", "model_toml", "tool_version"):
        if key in attrs and not isinstance(attrs[key], str):
            raise RecordError(path, key, "a text attribute", type(attrs[key]).__name__)
    for key in ("scenario_toml", "model_toml"):
        if attrs.get(key):
            import tomllib

            try:
                tomllib.loads(attrs[key])
            except tomllib.TOMLDecodeError as exc:
                raise RecordError(path, key, f"the resolved TOML text ({exc})") from None


def _check_joint(f: h5py.File, path: str, j: str, version: int) -> None:
    g = f"histograms/{j}"
    te = _small_finite(_dataset(f, path, f"{g}/torque_edges_nm", 1), path,
                       f"{g}/torque_edges_nm")
    se = _small_finite(_dataset(f, path, f"{g}/speed_edges_rad_s", 1), path,
                       f"{g}/speed_edges_rad_s")
    for name, e in (("torque_edges_nm", te), ("speed_edges_rad_s", se)):
        if e.size < 2 or not (np.diff(e) > 0).all():
            raise RecordError(path, f"{g}/{name}", "at least two increasing bin edges")
    shape = (te.size - 1, se.size - 1)
    for name in _HIST_SETS:
        a = _small_finite(_dataset(f, path, f"{g}/{name}", shape=shape), path,
                          f"{g}/{name}")
        if (a < 0).any():
            raise RecordError(path, f"{g}/{name}", "values >= 0")
    for name in _HIST_MOMENTS:
        ds = _dataset(f, path, f"{g}/{name}", shape=shape, required=False)
        if ds is not None:
            _small_finite(ds, path, f"{g}/{name}")
    hattrs = _read_plain_attrs(f, path, g)
    if "overflow_s" in hattrs and not (_is_number(hattrs["overflow_s"])
                                       and math.isfinite(hattrs["overflow_s"])):
        raise RecordError(path, f"{g} attribute overflow_s", "a finite number",
                          hattrs["overflow_s"])
    sg = f"summary/{j}"
    if sg not in f or not isinstance(f[sg], h5py.Group):
        raise RecordError(path, sg, "this group in the record (missing)")
    sa = _read_plain_attrs(f, path, sg)
    for k in _SUMMARY_KEYS:
        if k not in sa:
            raise RecordError(path, f"{sg} attribute {k}", "this attribute (missing)")
        if not (_is_number(sa[k]) and math.isfinite(sa[k])):
            raise RecordError(path, f"{sg} attribute {k}", "a finite number", sa[k])
    if "power_exponents" in sa:
        pe = np.atleast_1d(np.asarray(sa["power_exponents"]))
        tp = np.atleast_1d(np.asarray(sa.get("torque_power_angle", [])))
        ok = (pe.dtype.kind in "fiu" and tp.dtype.kind in "fiu" and pe.shape == tp.shape
              and pe.ndim == 1 and np.isfinite(pe).all() and (pe > 0).all()
              and np.isfinite(tp).all() and _is_number(sa.get("abs_angle_rad"))
              and math.isfinite(sa["abs_angle_rad"]))
        if not ok:
            raise RecordError(path, f"{sg} attributes power_exponents, torque_power_angle, "
                              "abs_angle_rad", "two lists of equal length of finite numbers "
                              "and a finite number")
    qg = f"quality/{j}"
    if qg in f:
        for k, v in _read_plain_attrs(f, path, qg).items():
            if not _is_number(v):
                raise RecordError(path, f"{qg} attribute {k}", "a number", v)


def _check_series(f: h5py.File, attrs: dict[str, Any], path: str) -> None:
    """Series of one length per group: /time_s and what is under /joints, /feet, /base;
    /steps on its own length."""
    n = None
    if "time_s" in f:
        n = _dataset(f, path, "time_s", 1).shape[0]  # type: ignore[union-attr]
    widths = {"force_n": 3, "position_m": 3, "orientation_xyzw": 4, "velocity_m_s": 3,
              "angular_velocity_rad_s": 3, "external_force_n": 3}
    for top in ("joints", "feet", "base"):
        if top not in f:
            continue
        if n is None:
            raise RecordError(path, "time_s", f"this dataset (missing, although /{top} holds "
                              "series)")
        for name in _walk_datasets(f, top, path):
            last = name.rsplit("/", 1)[-1]
            w = widths.get(last)
            _dataset(f, path, name, shape=(n,) if w is None else (n, w))
    if "steps" in f:
        m = None
        for name in _walk_datasets(f, "steps", path):
            ds = _dataset(f, path, name, 1)
            m = ds.shape[0] if m is None else m  # type: ignore[union-attr]
            _dataset(f, path, name, shape=(m,))
    if "segments/name" in f:
        from sim.core.paths import LABEL_RULE, label_problem

        ds = f["segments/name"]
        if not isinstance(ds, h5py.Dataset) or ds.dtype.kind not in "OS" or ds.ndim != 1:
            raise RecordError(path, "segments/name", "a list of segment names")
        for i, nm in enumerate(_plain(ds[()])):
            if label_problem(nm):
                raise RecordError(path, f"segments/name[{i}]", LABEL_RULE, nm[:100])
    for top in ("events", "segments"):
        if top in f:
            for name in _walk_datasets(f, top, path):
                ds = f[name]
                if not isinstance(ds, h5py.Dataset) or ds.ndim != 1:
                    raise RecordError(path, name, "a list (dataset of one dimension)")


def _walk_datasets(f: h5py.File, top: str, path: str) -> list[str]:
    out: list[str] = []
    if not isinstance(f[top], h5py.Group):
        raise RecordError(path, top, "a group")
    f[top].visit(lambda nm: out.append(f"{top}/{nm}")
                 if isinstance(f[f"{top}/{nm}"], h5py.Dataset) else None)
    return out


def _check_layout(f: h5py.File, attrs: dict[str, Any], path: str, version: int) -> None:
    """Everything the readers use, present and of the right type and shape."""
    _check_links(f, path)
    _check_root(attrs, path)
    for j in attrs["joint_names"]:
        _check_joint(f, path, j, version)
    _check_series(f, attrs, path)
    if "quality" in f:
        for k, v in _read_plain_attrs(f, path, "quality").items():
            if not (_is_number(v) or isinstance(v, str)):
                raise RecordError(path, f"quality attribute {k}", "a number or a text", v)


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
        try:
            _fix_metadata_cache(self._f, _READ_METADATA_CACHE_BYTES)
            self.format_version = _check_version(self._f, str(self.path))
            self._attrs = _read_plain_attrs(self._f, str(self.path), "")
            _check_layout(self._f, self._attrs, str(self.path), self.format_version)
        except BaseException:
            self._f.close()
            raise

    # metadata
    @property
    def attrs(self) -> dict[str, Any]:
        """Root attributes as plain Python values (read once: the file is open read-only)."""
        if self._attrs is None:
            self._attrs = self._read_attrs()
        return dict(self._attrs)

    def _read_attrs(self) -> dict[str, Any]:
        return _read_plain_attrs(self._f, str(self.path), "")

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
        if not isinstance(ds, h5py.Dataset):
            raise RecordError(str(self.path), name, "a dataset (it is a group)")
        try:
            if ds.ndim == 0:
                return np.asarray(ds[()])
            return np.asarray(ds[start:stop])
        except (OSError, ValueError, TypeError) as exc:
            raise RecordError(str(self.path), name, f"a readable dataset ({exc})") from None

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
        for name in names:
            if not isinstance(self._f[name], h5py.Dataset) or self._f[name].ndim < 1:
                raise RecordError(str(self.path), name, "a series dataset")
        lengths = {int(self._f[nm].shape[0]) for nm in names}
        if len(lengths) > 1:
            raise RecordError(str(self.path), ", ".join(names), "series of one length")
        n = lengths.pop() if lengths else 0
        chunks = self._chunks(names, n, rows, reuse)
        while True:
            try:
                item = next(chunks)
            except StopIteration:
                return
            except (OSError, ValueError, TypeError) as exc:  # a damaged or hostile file
                raise RecordError(str(self.path), ", ".join(names),
                                  f"readable series ({exc})") from None
            yield item

    def _chunks(self, names: Sequence[str], n: int, rows: int, reuse: bool
                ) -> Iterator[tuple[int, list[np.ndarray]]]:
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
        return _read_plain_attrs(self._f, str(self.path), name)

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
