"""Large-signal (DC) analysis: operating point, sweeps, several solutions, headroom.

Data flows one way through the modules of this package::

    Circuit + Process + temperature
      -> system.build_system      numeric nodal equations (DcSystem)
      -> newton.solve             Newton, gmin and source stepping (Solution)
      -> operating_point          frozen OperatingPoint (voltages, currents, regions, gm/ro/...)
      -> sweep                    Vout / temperature / supply sweeps and their metrics
      -> solutions                every DC solution from several starts (start-up check)
      -> headroom                 symbolic minimum output voltage from the active-region conditions

Import the functions from their modules (``from symbias.dc.operating_point
import operating_point``); this package's namespace stays small so that
``import symbias.dc`` stays cheap.
"""

__all__: list[str] = []
