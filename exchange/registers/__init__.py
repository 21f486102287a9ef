"""Legacy context registers in: a spreadsheet or CSV a unit already keeps, read, checked, then committed.

* ``reading`` — the file (CSV or XLSX) as rows of text cells with their row numbers;
* ``layout`` — the columns: which holds what (the default names or the user's mapping), and
  either a context per row with lists of related labels, or a relationship per row;
* ``plan`` — the dry run against the project's record (every refused row, every contradiction
  with the cycle it would close) and the all-or-nothing commit as one record revision.
"""
