"""Case files in: the schema of every key, typed field readers, safe expressions, tabulated profiles, the Case.

Pipeline position: first.  ``load_case`` (:mod:`fdsolver.input.case`) turns a TOML file into a validated
:class:`~fdsolver.input.case.Case` with params resolved, units fixed and the potential built.
"""
