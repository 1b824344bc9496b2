"""The vehicle: static balance (axle and corner loads, rule checks), steady-state load transfer, the seated driver.

May import: :mod:`massmodel.core` (not :mod:`massmodel.cad`, its sibling of layer 1).
"""
