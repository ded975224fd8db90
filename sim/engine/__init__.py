"""Stage 5, the engine runner: takes a scenario and gives an HDF5 run record and a run summary
(:mod:`.runner`). The only place that imports pybullet; it builds the URDF, sets up the drive
dynamics, steps the simulation with the segment controllers, clamps torques to the actuator
envelopes, detects falls and divergence and streams every step into the record writer.
"""
