"""The simulation room: the physics once, and three tables of ranges over it.

:mod:`host_sim.sim.physics` holds the constants, the loss terms, the piecewise
integrator and the crossing search; :mod:`host_sim.sim.kinds` one right-hand
side per physical kind; :mod:`host_sim.sim.sensor` the sensor model (sampling,
noise, quantisation, faults) and the truth helpers; :mod:`host_sim.sim.ranges`
how a table of ranges is drawn. :mod:`host_sim.sim.scenarios` (narrow kinds),
:mod:`host_sim.sim.family_tables` and :mod:`host_sim.sim.drink_families` over
:mod:`host_sim.sim.family_base`, with :mod:`host_sim.sim.families` (wide
ranges, generation and cache) and :mod:`host_sim.sim.vessels` (fixed
products) are the tables over them.
"""
