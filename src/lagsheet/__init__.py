"""lagsheet: insulation sizing and checking for equipment schedules in spreadsheets."""

__version__ = "0.1.0"
