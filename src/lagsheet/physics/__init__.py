"""Pure numerics in SI on numpy arrays: no spreadsheet, CLI or unit-library code here."""
