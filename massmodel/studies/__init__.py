"""Studies: parameter sweeps and one-at-a-time sensitivities, the CG track as fuel burns, what changed between two
versions of a model, the mass budget for spreadsheets, and large studies handed to Dask.

Everything here re-evaluates a model file read once (:func:`massmodel.modelfile.loader.read_source`); a study never
re-reads the file per point. :mod:`massmodel.studies.evaluate` rebuilds only the parts that a varied parameter can
reach and is checked against full rebuilds.

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`, :mod:`massmodel.modelfile` (and dask, lazily).
"""
