"""Stage 6, loads: takes run records (and usage mixes of several records) and gives duty
spectra per joint (:mod:`.spectra`: time and revolutions at each torque and speed level,
equivalent torques, RMS, load-duration), figures from the time series (:mod:`.series`:
stance/swing, exceedances, hold time), everything the loads command reports
(:mod:`.report`) and its CSV tables (:mod:`.tables`), rainflow cycle counts
(:mod:`.rainflow`, ASTM E1049), Miner damage and exact cycle totals (:mod:`.damage`) and
usage mixes (:mod:`.mix`), and the quality screen of a record judged against stated
thresholds (:mod:`.quality`). Reads records through :mod:`sim.record`; never imports the
engine.
"""
