"""Archive and exchange: the whole project out and back in, in open formats.

* ``package`` — the project package (a Frictionless Data Package of CSV
  tables with Table Schemas, a README and the run sample files) written by
  streaming rows, and read back with every row checked;
* ``replay`` — import of a package into an empty project by replaying its
  change log through the record's one write path, revision by revision;
* ``linked_data`` — the record as JSON-LD (CIDOC CRM, CRMarchaeo, PROV-O);
* ``registers`` — legacy context registers (CSV or spreadsheet) in.
"""
