"""Figures (matplotlib, imported lazily): takes the results of the loads, checks and sweeps
stages and gives PNG and SVG files, written atomically: duty spectra and rainflow matrices
(:mod:`.loads`), reducer utilisation (:mod:`.check`), motor operating points and winding
temperature (:mod:`.motor`), sweep metrics and Pareto fronts (:mod:`.sweep`). Nothing in the
library imports this package except the commands.
"""
