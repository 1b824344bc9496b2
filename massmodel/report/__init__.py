"""Reports: the text tables and JSON of every result (model, load cases, ballast, packaging, measurements).

May import: everything below it (core, vehicle, cad, uncertainty, modelfile, ballast, measure, compare, studies); never
pictures, cli or notebook.
"""
