"""Pure computation for Tellstack: no Django, no database.

Every function here takes plain data (dataclasses, numbers, numpy arrays) and
returns plain data, so it can be tested directly and against reference
libraries.  The Django apps translate between models and these types.
"""
