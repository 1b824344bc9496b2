"""Ballast: tungsten blocks sized to slots, ballast plans, placement across slots, seat ballast, ballast outputs.

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`, :mod:`massmodel.cad`, :mod:`massmodel.uncertainty`,
:mod:`massmodel.modelfile`; not its siblings of layer 4 (ballast, measure, compare, studies).
"""
