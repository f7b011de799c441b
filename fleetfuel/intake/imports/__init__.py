"""Spreadsheet imports in fleetfuel's own layouts: ``layouts`` (the registry of kinds),
``readers`` (CSV and XLSX, streamed), ``columns`` (a cell to a value), ``kind`` (a layout,
a row's refusal, the lookups), ``apply`` (dry run, all-or-nothing, good rows only).
How to add a kind: DEVELOPERS.md, "Adding an import kind"."""
