"""Measurement sessions: corner weights, model versus scales, axle lift (CG height), pendulums (inertia).

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`, :mod:`massmodel.cad`, :mod:`massmodel.modelfile`.
"""
