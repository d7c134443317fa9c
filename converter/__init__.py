"""pertbook: an activity sheet in, an auditable schedule-risk workbook out."""

__version__ = "0.1.0"

__all__ = ["__version__", "convert", "check", "ConvertOptions", "ConvertResult"]


def __getattr__(name):
    if name in ("convert", "check", "ConvertOptions", "ConvertResult"):
        from converter import api

        return getattr(api, name)
    raise AttributeError(name)
