"""Checks of drivetrain parts against duty spectra (reducer, motor, thermal, supply)."""
