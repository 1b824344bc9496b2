"""Measurement sessions: corner weights, model versus scales, axle lift (CG height), pendulums (inertia).

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`, :mod:`massmodel.cad`, :mod:`massmodel.uncertainty`,
:mod:`massmodel.modelfile`; not its siblings of layer 4 (ballast, measure, compare, studies).
"""
