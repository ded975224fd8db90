"""gaitload: duty cycles, reducer life and motor heating for the joints of walking robots.

Stages, in the order data flows (each package's docstring says what it takes and gives). A
module imports only from its own stage and the stages above it; only the commands import the
figures, and nothing imports the commands (enforced by tests/test_layering.py):

    core      errors, config, atomic,  - error hierarchy, strict TOML reading, atomic output,
              streams, paths,            block-wise streaming statistics, output paths and
              plausible                  safe names, plausible ranges of every key
    parts     drivetrain, ratios,      - the drivetrain file and its motor and reducer parts,
              motor_constants            read once for the simulation and the checks
    robot     model, urdf, kinematics, - the robot description (pure numpy)
              statics, inertia
    drive     envelope, dynamics,      - actuator torque envelope, engine-side drive dynamics
              backdrive                  (rotors, friction, backlash), back-drive figures
    scenario  scenario_file, segments, - what the robot does: scenario files, the registry of
              disturbance, gaits.*       segment kinds, the segment controllers (pure numpy)
    record                             - THE ONLY MODULE THAT TOUCHES h5py
    engine    runner                   - THE ONLY MODULE THAT IMPORTS pybullet
    loads     spectra, series, report, - records to duty spectra (never imports the engine),
              rainflow, damage, mix,     and the quality screen of a record judged
              tables, quality
    checks    drivetrain_file, reducer - parts against spectra: reducers, bearings, contact,
              and its kinds, motor*,     gears, materials, motor, thermal, supply, report;
              duty_input,                the duty of a record or a mix, and the whole check
              drivetrain_check, ...      of a drivetrain
    sweeps    providers, metrics,      - many cases in parallel (process pool or Dask)
              spec, cases, ranking,
              executors, cluster
    figures   loads, check, motor,     - matplotlib figures (imported lazily)
              sweep
    commands  cli, <command>,          - thin command-line layer over the library
              cli_provider

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
