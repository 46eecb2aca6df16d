"""The blank workbooks ``lagsheet new`` writes: copies of ``sheet_templates/``, made by its build script."""
