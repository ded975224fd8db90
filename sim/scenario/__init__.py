"""Stage 3, the scenario and its gaits: takes a scenario file (TOML) naming a robot model and
gives a validated :class:`~.scenario_file.Scenario` (:mod:`.scenario_file`), its disturbances
(:mod:`.disturbance`), and a segment controller per segment (:mod:`.segments` is the registry
of segment kinds; the controllers, the jump among them, live in :mod:`.gaits`). Controllers
turn a measured robot state into joint targets and feed-forward torques; pure numpy, they
never touch the engine.
"""
