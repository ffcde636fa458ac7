"""Fitting a circuit to a measurement: problem, seeding, local fit, assessment, intervals, model choice."""
