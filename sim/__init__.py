"""gaitload: duty cycles, reducer life and motor heating for the joints of walking robots.

Module map and the one dependency rule (data flows top to bottom; a module may import
only from modules above it or beside it in the same group):

    errors, config, atomic         - error hierarchy, strict TOML reading, atomic file output
    inertia, model, kinematics,    - robot description (pure numpy)
    actuator, statics, urdf,
    backdrive
    scenario, gait, gaits.*, jump  - what to do and how (pure numpy)
    drive                          - engine-side rotor and friction set-up (called by runner)
    runner                         - THE ONLY MODULE THAT IMPORTS pybullet
    record                         - THE ONLY MODULE THAT TOUCHES h5py
    spectra, rainflow, mix         - post-processing of records (never imports the engine)
    drivetrain, materials,         - reducer, motor, thermal and supply checks on spectra
    checks.*
    sweep                          - many cases in parallel (process pool or Dask)
    plots, sweep_plots,            - matplotlib figures (imported lazily)
    checks.plots, checks.motor_plots
    cli, commands.*                - thin command-line layer over the library

Array convention everywhere: time series are ``[sample]`` or ``[sample, component]``;
per-joint arrays are dictionaries keyed by joint name (``fl_knee``) rather than a joint axis.
Units are SI and appear in names: ``torque_nm`` (newton metres), ``speed_rad_s``, ``time_s``.
"""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("gaitload")
except PackageNotFoundError:  # running from a source tree without installation
    __version__ = "0.1.0+src"

LEGS: tuple[str, ...] = ("fl", "fr", "hl", "hr")
JOINT_KINDS: tuple[str, ...] = ("abad", "hip", "knee")
JOINT_NAMES: tuple[str, ...] = tuple(f"{leg}_{kind}" for leg in LEGS for kind in JOINT_KINDS)

__all__ = ["JOINT_KINDS", "JOINT_NAMES", "LEGS", "__version__"]
