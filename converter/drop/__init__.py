"""The drop folder: files dropped into an inbox are converted and filed away.

In the order a file meets them: ``folder`` (layout, safe moves, job folders), ``inbox``
(which files are complete), ``loop`` (claim, hand to workers, collect, back off),
``worker`` (the conversion in a process of its own), ``plan`` (where each file goes, a
pure decision), ``results`` (carrying the plan out), ``health`` (log and back-off).
``command`` is what ``pertbook watch`` calls: :func:`add_watch_arguments` and
:func:`run_watch`.
"""

from converter.drop.command import add_watch_arguments, run_watch

__all__ = ["add_watch_arguments", "run_watch"]
