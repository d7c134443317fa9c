"""Load workbooks in a running LibreOffice and save them as xlsx (a UNO client).

Run by a Python that has LibreOffice's ``uno`` module (on Debian the system ``python3``
with ``python3-uno``; LibreOffice's own bundled ``python`` elsewhere), which is usually
not the test environment's interpreter. It therefore imports only the standard library
and ``uno``. tests/support/recalc.py starts it; nothing else should.

Input (stdin, JSON): ``{"connect": "<UNO connection string>", "jobs": [[src, dst], ...]}``.
Output (stdout): one JSON line per job, ``{"src": ..., "ok": true}`` or
``{"src": ..., "ok": false, "error": "..."}``. Exit code 3 if the office cannot be
reached at all.

The document is loaded hidden and stored with the ``Calc MS Excel 2007 XML`` filter, the
same filter ``soffice --convert-to xlsx`` uses. Nothing here asks for a recalculation:
whether formulas are recalculated on load is left to the office's profile
(``OOXMLRecalcMode``), which is what the harness tests prove.
"""

import json
import sys
import time

import uno
from com.sun.star.beans import PropertyValue  # type: ignore[import-not-found]

XLSX_FILTER = "Calc MS Excel 2007 XML"


def props(**values):
    out = []
    for name, value in values.items():
        p = PropertyValue()
        p.Name = name
        p.Value = value
        out.append(p)
    return tuple(out)


def connect(where, wait):
    local = uno.getComponentContext()
    resolver = local.ServiceManager.createInstanceWithContext(
        "com.sun.star.bridge.UnoUrlResolver", local
    )
    deadline = time.monotonic() + wait
    while True:
        try:
            ctx = resolver.resolve(f"uno:{where};urp;StarOffice.ComponentContext")
            return ctx.ServiceManager.createInstanceWithContext("com.sun.star.frame.Desktop", ctx)
        except Exception:  # NoConnectException until the office listens
            if time.monotonic() > deadline:
                raise
            time.sleep(0.1)


def convert(desktop, src, dst):
    doc = desktop.loadComponentFromURL(
        uno.systemPathToFileUrl(src), "_blank", 0, props(Hidden=True, ReadOnly=True)
    )
    if doc is None:
        raise RuntimeError("source file could not be loaded")
    try:
        doc.storeToURL(uno.systemPathToFileUrl(dst), props(FilterName=XLSX_FILTER, Overwrite=True))
    finally:
        doc.close(True)


def main():
    request = json.load(sys.stdin)
    try:
        desktop = connect(request["connect"], float(request.get("wait", 0)))
    except Exception as exc:
        print(json.dumps({"ok": False, "error": f"cannot reach LibreOffice: {exc}"}), flush=True)
        return 3
    for src, dst in request["jobs"]:
        try:
            convert(desktop, src, dst)
            print(json.dumps({"src": src, "ok": True}), flush=True)
        except Exception as exc:
            text = getattr(exc, "Message", "") or str(exc) or type(exc).__name__
            print(json.dumps({"src": src, "ok": False, "error": text}), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
