"""Reports: the text tables and JSON of every result (model, load cases, ballast, packaging, measurements).

May import: everything below it (core, vehicle, cad, modelfile, ballast, measure, compare); never pictures or cli.
"""
