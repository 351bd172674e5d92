"""ngspice as a component: decks out, operating points and small-signal values in.

The simulator side, one layer above the DC solver (:mod:`symbias.dc`) and
below the pipeline.  Data flows one way:

* :mod:`~symbias.simulator.deck`: Circuit -> deck text, through the ``deck``
  hook of every element kind (:mod:`symbias.elements`); flattened subcircuit
  elements get the names ngspice itself gives them (``Q.X1.Q2``), ``m`` is
  written as ``m``, the tight tolerances of the project's ngspice checks are
  set and a comment header says what symbias assumed;
* :mod:`~symbias.simulator.cards`: the model cards and ``.include``/``.lib``
  lines of the deck: the user's cards written back as written, never rewritten;
* :mod:`~symbias.simulator.ngspice`: runs ``ngspice -b`` as a subprocess
  (argument list, no shell, a temporary folder, a timeout) and reads the
  numbers it prints; any error in its output is a
  :class:`~symbias.errors.SimulatorError` even when it exits with 0; nothing of
  its output is evaluated;
* :mod:`~symbias.simulator.families`: which ngspice instance parameters give
  gm, ro, gmb, the capacitances ... for each model family (MOS levels 1-3, 6,
  9, BSIM3, BSIM4; Gummel-Poon and VBIC bipolars; the junction diode);
* :mod:`~symbias.simulator.operating_point`: the simulator's operating point
  as the same frozen :class:`~symbias.dc.results.OperatingPoint` the built-in
  solver returns;
* :mod:`~symbias.simulator.corners`: a netlist re-read with another section of
  its ``.lib`` files (process corners);
* :mod:`~symbias.simulator.compare`: the built-in models' operating point
  beside the simulator's, per device and parameter.
"""
