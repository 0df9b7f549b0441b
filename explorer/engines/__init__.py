"""The numerical engines the supply models are built on; no engine knows a supply family.

Switched-capacitor networks (the pumps; any linear RC network with switches):

* :mod:`~explorer.engines.elements` — the two-terminal elements (Cap, Res, VSrc, ISrc);
* :mod:`~explorer.engines.network` — a network's nodal analysis per phase and its exact phase maps;
* :mod:`~explorer.engines.expm` — the batched matrix exponential and φ-functions;
* :mod:`~explorer.engines.expsum` — real roots of exponential sums (exact extrema and crossings);
* :mod:`~explorer.engines.periodic` — the periodic steady state and its exact averages, RMS and extrema;
* :mod:`~explorer.engines.startup` — chosen start-up cycles in closed form;
* :mod:`~explorer.engines.transient` — start-up over any number of cycles
  (:mod:`~explorer.engines.transient_bounds`, :mod:`~explorer.engines.transient_search`);
* :mod:`~explorer.engines.spice_text` — the same network as a SPICE netlist.

Diode-charged rails (the bootstrap; the rail of a capacitor refreshed through a diode):

* :mod:`~explorer.engines.rail_loop` — the loop's parameters per interval;
* :mod:`~explorer.engines.rail_linear`, :mod:`~explorer.engines.rail_junction` — exact interval maps
  for the straight-line and the exponential junction diode;
* :mod:`~explorer.engines.rail_orbit` — periodic orbits and trajectories;
* :mod:`~explorer.engines.rail_integrals` — charge and energy integrals, crossing times.

Shared: :mod:`~explorer.engines.affine` — prefix composition of affine maps.

This package imports nothing of its own; import the module you need.
"""
