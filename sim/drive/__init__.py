"""Stage 2, the drive between motor and joint: takes a robot model's actuators and gives the
torque-speed envelope of each joint (:mod:`.envelope`: current and voltage limits), the
engine-side drive dynamics that the runner sets up (:mod:`.dynamics`: rotor inertia, reducer
friction and efficiency, backlash and elastic mesh; handed the engine module, never imports
it) and the back-drive figures of a model (:mod:`.backdrive`: reflected inertia, back-drive
torque, impact mitigation factor).
"""
