"""Interpretations of a project's record: named lines of thought held as immutable versions.

``models`` (interpretations, versions and their guards, the current reading),
``content`` (the version document and its validator), ``validity`` (the check
of a version at its own record revision), ``services`` (every action, logged
to the project's change log), ``alternatives`` and ``tasks`` (the analysis of
undecided items as a background job) and ``demo`` (the demo step).
"""
