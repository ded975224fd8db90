"""Stage 1, the robot: takes a model file (TOML) and gives a :class:`~.model.RobotModel` (leg
geometry, masses, actuator tables), its URDF text (:mod:`.urdf`), leg kinematics
(:mod:`.kinematics`), stance statics (:mod:`.statics`) and rigid-body inertia helpers
(:mod:`.inertia`). Pure numpy; nothing here runs the engine.
"""
