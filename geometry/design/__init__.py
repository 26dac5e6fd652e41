"""The design-file language: YAML read with the line of every key, the declarative schema that
validates it (field specs in ``spec_*``, the declared fields in ``schema``), safe expressions over
named references, ``--set`` overrides, and :func:`loader.load_design`. Takes a file (or a tree) and
gives a typed, immutable :class:`loader.Design`, or a
:class:`~platewright.geometry.errors.DesignError` naming every bad field with its line.
"""
