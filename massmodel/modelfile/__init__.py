"""Input files: the one file layer every reader uses, and the model-file loader.

``reader``: reading text (missing files, non-UTF-8 bytes, deep nesting), TOML and JSON, the ``[units]`` table, the
point syntax, the base of every file's reader, and :class:`ModelFileError`; ``uncertainty``: the ``[uncertainty]``
section (per-part standard uncertainties, merged across ``extends``); ``extends``: merging a model that extends
another; ``fields``: the values of a model file in SI (quantities, poses, shapes, paths, colours); ``parts``,
``cases``, ``driver`` and ``chassis``: the ``[[part]]``, ``[[case]]``, ``[[driver]]`` tables and the ``[chassis]``
section; ``partstream``: a file's ``[[part]]`` tables parsed a batch at a time while the model is built (a large
file's parsed tables and its model are never both whole in memory); ``loader``: :func:`load_model`,
:class:`ModelSource`, :func:`read_source`, :func:`build_model`. Each module imports only those listed before it
(the loader imports them all; nothing imports the loader).

May import: :mod:`massmodel.core`, :mod:`massmodel.vehicle`, :mod:`massmodel.cad` (STEP and mesh shapes, loaded lazily),
:mod:`massmodel.uncertainty`.
"""
