"""Random device mismatch: seeded samples of per-device model parameters by Pelgrom's law.

A side step of the DC side, feeding :func:`symbias.dc.operating_point.operating_points`:
:func:`mismatch_samples` draws, for every device whose process entry (or
``.model`` card) gives mismatch coefficients, independent Gaussian variations
of its model parameters and returns them as samples (``"M1.VTO"``,
``"M1.KP"``, ``"Q1.IS"``), each an array of ``count`` values.

The laws (each device model states its own, see ``mismatch`` in
:mod:`symbias.devices.nonlinear`):

* MOS (Pelgrom, Duinmaijer and Welbers, IEEE JSSC 24(5), 1989): for a pair
  of devices of gate area ``W L``, ``sigma(dVT) = AVT / sqrt(W L)`` and
  ``sigma(dbeta/beta) = ABETA / sqrt(W L)``; each device of a pair varies by
  ``1/sqrt(2)`` of that, so ``VTO`` gets ``AVT / sqrt(2 W L m)`` and ``KP`` a
  relative ``ABETA / sqrt(2 W L m)``;
* BJT and diode: ``AIS`` is the sigma of the saturation-current ratio of a
  pair of unit-area devices; ``IS`` gets a relative ``AIS / sqrt(2 area m)``.

Examples
--------
>>> from symbias.netlist import parse_netlist
>>> c = parse_netlist('''pair
... I1 0 a 10u
... M1 a a 0 0 NCH W=4u L=1u
... M2 b a 0 0 NCH W=4u L=1u
... Vb b 0 1
... .model NCH nmos (VTO=0.6 KP=100u AVT=8e-9)
... ''')
>>> s = mismatch_samples(c, count=20000, seed=1)
>>> sorted(s), round(float((s["M1.VTO"] - s["M2.VTO"]).std()) * 1e3, 1)
(['M1.VTO', 'M2.VTO'], 4.0)
"""

from __future__ import annotations

from typing import Any, Mapping

import numpy as np

from ..circuit import Circuit
from ..devices.dc_context import StampContext
from ..devices.nonlinear import device_model
from ..errors import ProcessError
from ..process import Process

__all__ = ["mismatch_samples", "mismatch_sigmas"]


def mismatch_sigmas(circuit: Circuit, process: Process | None = None,
                    values: Mapping[str, Any] | None = None) -> dict[str, tuple[float, float]]:
    """Sample name -> (nominal value, sigma) for every varying model parameter of every device.

    Examples
    --------
    >>> from symbias.netlist import parse_netlist
    >>> c = parse_netlist("t\\nI1 0 a 1m\\nQ1 a a 0 QN 4\\n.model QN npn (IS=1e-16 AIS=0.02)\\n")
    >>> nominal, sigma = mismatch_sigmas(c)["Q1.IS"]
    >>> round(sigma / nominal, 6)
    0.007071
    """
    context = StampContext.create(circuit, process, values=values)
    out: dict[str, tuple[float, float]] = {}
    for element in circuit.devices:
        model = device_model(element.kind)
        if model is None or model.mismatch is None:
            continue
        _, params, _ = context.model_parameters(element)
        for name, (nominal, sigma) in model.mismatch(params, element, context).items():
            out[f"{element.name}.{name}"] = (float(nominal), float(sigma))
    return out


def mismatch_samples(circuit: Circuit, process: Process | None = None, count: int = 1000, seed: int = 0, *,
                     values: Mapping[str, Any] | None = None) -> dict[str, np.ndarray]:
    """``count`` seeded samples of every device's mismatch, as samples for ``operating_points``.

    The same ``seed`` gives the same samples; devices and parameters are
    drawn in netlist order.

    Raises
    ------
    ProcessError
        When no device has mismatch coefficients (``AVT``/``ABETA`` for MOS,
        ``AIS`` for bipolar transistors and diodes).
    """
    sigmas = mismatch_sigmas(circuit, process, values)
    if not sigmas:
        raise ProcessError("no device has mismatch coefficients (AVT, ABETA for MOS; AIS for bipolar transistors "
                           "and diodes) in the process file or its .model card",
                           path=process.path if process is not None else circuit.path)
    rng = np.random.default_rng(seed)
    return {name: nominal + sigma * rng.standard_normal(int(count)) for name, (nominal, sigma) in sigmas.items()}
