"""Device models: small-signal expansions and large-signal (DC) models.

:mod:`symbias.devices.small_signal` holds the linear models that the symbolic
engine substitutes for each transistor; :mod:`symbias.devices.bjt` and
:mod:`symbias.devices.mos` hold the DC models and temperature laws used by the
operating-point solver.
"""
