"""Parts: motors, reducers and the supply as the drivetrain file describes them, read once.

Takes a drivetrain file (which reducer part and motor part drive which joint, and the supply)
and gives, per joint, every constant the simulation uses (ratio, motor constants, rotor plus
reducer input inertia, reducer friction and efficiency, backlash and mesh, current and voltage
limits) together with the part tables the checks read (:mod:`sim.parts.drivetrain`). The
conversions both the simulation and the checks need live here too: motor constants and their
conventions (:mod:`sim.parts.motor_constants`) and the ratio of each reducer kind
(:mod:`sim.parts.ratios`). Pure Python and numpy; comes right after ``core``.
"""
