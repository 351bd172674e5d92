"""The design layer: choosing and sizing the bias block against a specification.

* :mod:`~symbias.design.spec`: the block specification file -> :class:`~symbias.design.spec.Spec`.

Examples
--------
>>> from symbias.design.spec import load_spec
>>> load_spec("examples/sensor_bias_spec.toml").limits.temperature
(-40.0, 125.0)
"""
