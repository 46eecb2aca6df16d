"""The calculation package (``lagsheet calcs``): a PDF a client's reviewer approves.

:mod:`.package` assembles it; :mod:`.basis` the title page and design basis; :mod:`.tables`
the Summary, Quantities and results by area; :mod:`.sheet` one line's calculation sheet from
its :class:`.records.LineSheet` (the numbers, gathered by :mod:`lagsheet.commands.calcs`);
:mod:`.chart` vector charts; :mod:`.document` the pages, footer and tables.
"""
