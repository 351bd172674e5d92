"""Large-signal (DC) analysis: operating point, sweeps, several solutions, headroom.

Data flows one way through the modules of this package::

    Circuit + Process + temperature (+ samples: a batch)
      -> system.build_system      every element's dc hook -> numeric nodal equations (DcSystem)
      -> newton                   Newton, batched over K samples
      -> stepping.solve_batch     warm start, Newton, gmin and source stepping, per sample (BatchSolution)
      -> report.report_batch      voltages, currents, regions, gm/ro/... as arrays (OperatingPoints)
      -> operating_point          operating_point (one) and operating_points (K in one batch)
      -> sweep                    Vout / temperature / supply sweeps (continuation: batched levels)
      -> solutions                every DC solution from several starts (start-up check)
      -> headroom                 symbolic minimum output voltage from the active-region conditions

``mismatch`` draws Pelgrom samples for Monte Carlo; ``reference`` writes and
runs ngspice decks for the tests and the benchmark.  Devices are reached only
through :mod:`symbias.devices.nonlinear`.

Import the functions from their modules (``from symbias.dc.operating_point
import operating_point``); this package's namespace stays small so that
``import symbias.dc`` stays cheap.
"""

__all__: list[str] = []
