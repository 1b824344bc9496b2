"""The CAD department's estimate: reading JSON/CSV/STEP estimates, the comparison and the diagnosis of convention
mix-ups.

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`, :mod:`massmodel.cad`, :mod:`massmodel.uncertainty`,
:mod:`massmodel.modelfile`; not its siblings of layer 4 (ballast, measure, compare, studies).
"""
