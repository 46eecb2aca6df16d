"""lagsheet: insulation sizing and checking for equipment schedules in spreadsheets."""

__version__ = "0.1.0"


def __getattr__(name: str):
    """``lagsheet.size`` (and its ``SizeError``), imported when first used: ``import lagsheet`` stays light."""
    if name in ("size", "SizeError"):
        from . import api

        return getattr(api, name)
    raise AttributeError(f"module 'lagsheet' has no attribute {name!r}")
