"""The page: one self-contained HTML file of a model for the whole team (tables, pictures, the car in 3-D).

Holds the page's sections (built from the data of :mod:`massmodel.report`), the 3-D view's payload and the page
document; the viewer script is bundled at build time from ``massmodel/page/js/`` (pinned npm packages).

May import: everything below it — core, vehicle, cad, modelfile, ballast, measure, compare, report, pictures —
never :mod:`massmodel.cli`.
"""
