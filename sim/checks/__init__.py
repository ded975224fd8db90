"""Stage 7, checks: takes duty spectra (and the series behind them) with a drivetrain file
(:mod:`.drivetrain_file`: which reducer and motor part drives which joint, and the supply) and
gives per-joint verdicts with their limits and margins: reducer life and peak (:mod:`.reducer`
and its kinds :mod:`.cycloid` with :mod:`.cycloid_geometry`, :mod:`.planetary`, :mod:`.belt`,
with :mod:`.bearing`, :mod:`.contact`, :mod:`.gear`, :mod:`.materials`), motor envelope and
winding temperature (:mod:`.motor`: the check; the part and its envelope :mod:`.motor_part`, a
record as motor operating points :mod:`.motor_duty`, winding temperature :mod:`.motor_heating`
with :mod:`.thermal`, one record's result :mod:`.motor_record`), battery current and energy
(:mod:`.supply`), gathered in the report model (:mod:`.report`). The duties come from a record
or a usage mix (:mod:`.duty_input`); :mod:`.drivetrain_check` runs every check of a drivetrain
(``gaitload check`` as a function). Never imports the engine.
"""
