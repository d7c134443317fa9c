"""pertbook: an activity sheet in, an auditable schedule-risk workbook out."""

__version__ = "0.1.0"

#: Public names served from :mod:`converter.api` on first use, so that ``import converter``
#: (done by every worker process) stays cheap.
_FROM_API = ("convert", "check", "load", "ConvertOptions", "ConvertResult", "PertbookError")

__all__ = ["__version__", *_FROM_API]


def __getattr__(name: str):
    if name in _FROM_API:
        from converter import api

        return getattr(api, name)
    raise AttributeError(f"module 'converter' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
