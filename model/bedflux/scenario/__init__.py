"""The scenario: TOML file -> validated, frozen description of one section model.

Modules: ``spec`` (the tables and their checks, ``load``), ``units`` (quantities with units),
``checks`` (the named checks and their message template), ``forcing`` (stage and boundary
signals), ``inputfile`` (safe reading of input files).
"""
