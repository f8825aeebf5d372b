"""Readers and writers at the edge of partsel, each bounded and each failing with InputError
(naming the file, the line or record and the field).

- :mod:`partsel.io.textfile`: YAML / JSON / TOML files to Python data, with limits on size,
  nesting depth, YAML alias expansion and number length (every structured-file reader uses it);
- :mod:`partsel.io.bom`: BOM CSV files to cells and the column of each role;
- :mod:`partsel.io.csvout`: the one CSV writer (formula injection neutralised);
- :mod:`partsel.io.suffix`: the maker suffix-rule language used to match BOM part numbers;
- :mod:`partsel.io.partnumber`: characters allowed in part numbers and maker names, and the
  cleaning of BOM cells before matching;
- :mod:`partsel.io.paths`: output paths checked before any work.

Importing this package imports none of them (the core may import the pure ones alone).
"""
