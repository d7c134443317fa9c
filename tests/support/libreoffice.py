"""One headless LibreOffice for many workbooks: started once, recalculating on load.

Starting LibreOffice costs a second or more, every time; a test session that
recalculates some twenty workbooks should pay it once. :class:`LibreOffice` starts one
headless ``soffice`` listening on a private pipe, in its own process group and with a
private user profile that forces recalculation on load (``OOXMLRecalcMode`` = 0, see
tests/support/recalc.py), and converts each workbook by a short UNO client
(tests/support/uno_convert.py) run with a Python that has LibreOffice's ``uno`` module.

Where no such Python exists the same class falls back to ``soffice --convert-to`` with
the same private profile, one LibreOffice start per call but any number of workbooks per
call (:meth:`LibreOffice.recalculate_many`). Either way, every wait has a timeout and a
LibreOffice that overruns it is killed with its whole process group.

Not a test module; tests reach it through the ``libreoffice`` fixture (tests/conftest.py).
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import subprocess
import tempfile
import threading
import uuid
import weakref
from pathlib import Path

#: 0 = RECALC_ALWAYS, 1 = RECALC_NEVER, 2 = RECALC_ASK (LibreOffice ``enum ScRecalcOptions``,
#: sc/inc/calcconfig.hxx: "have to match the registry values").
RECALC_ALWAYS = 0
RECALC_NEVER = 1

PROFILE_TEMPLATE = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry"
 xmlns:xs="http://www.w3.org/2001/XMLSchema"
 xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" \
oor:op="fuse"><value>{mode}</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" \
oor:op="fuse"><value>{mode}</value></prop></item>
</oor:items>
"""

XLSX_FILTER = "Calc MS Excel 2007 XML"
DEFAULT_TIMEOUT = 240.0  # seconds for one call (a first start with a fresh profile is slow)
START_TIMEOUT = 120.0  # seconds for a listening LibreOffice to accept connections
CLIENT = Path(__file__).resolve().with_name("uno_convert.py")
_OPTIONS = ["--headless", "--invisible", "--nologo", "--nodefault", "--nolockcheck", "--norestore"]
_BUNDLED_PYTHON = ("python", "python.exe", "python.bin", "../Resources/python")


class RecalcError(RuntimeError):
    """LibreOffice could not open, recalculate or save a workbook."""


def kill_group(proc: subprocess.Popen, grace: float = 0.0) -> None:
    """End a process we started in its own session, with all its children.

    ``soffice`` is a launcher that forks ``oosplash`` and ``soffice.bin``; killing the
    process group reaches all three. With ``grace`` > 0 a SIGTERM comes first.
    """
    for sig, wait in ((signal.SIGTERM, grace), (signal.SIGKILL, None)):
        if sig == signal.SIGTERM and grace <= 0:
            continue
        try:
            os.killpg(proc.pid, sig)
        except (ProcessLookupError, PermissionError):
            pass
        try:
            proc.wait(timeout=wait)
            return
        except subprocess.TimeoutExpired:
            continue


def find_uno_python(soffice: str) -> str | None:
    """A Python that can ``import uno``: env ``PERTBOOK_UNO_PYTHON``, LibreOffice's own, system.

    Debian-style installs use the system ``python3`` with ``python3-uno``; the LibreOffice
    bundles for Windows and macOS carry their own ``python`` beside ``soffice``.
    """
    given = os.environ.get("PERTBOOK_UNO_PYTHON")
    program = Path(os.path.realpath(soffice)).parent
    candidates = [given] if given else []
    candidates += [str(program / name) for name in _BUNDLED_PYTHON]
    candidates += ["/usr/bin/python3", shutil.which("python3") or ""]
    for exe in candidates:
        if not exe or not Path(exe).is_file():
            continue
        try:
            probe = subprocess.run([exe, "-c", "import uno"], capture_output=True, timeout=60)
        except (OSError, subprocess.TimeoutExpired):
            continue
        if probe.returncode == 0:
            return exe
    return None


def _cleanup(work: Path, server: list[subprocess.Popen | None]) -> None:
    """Kill a still-running listening LibreOffice and remove the work folder (finalizer)."""
    if server[0] is not None and server[0].poll() is None:
        kill_group(server[0], grace=5.0)
    shutil.rmtree(work, ignore_errors=True)


class LibreOffice:
    """A headless LibreOffice that recalculates workbooks, started once for many.

    Parameters
    ----------
    soffice : str
        Path of the ``soffice`` executable.
    recalc_mode : int
        ``OOXMLRecalcMode`` / ``ODFRecalcMode`` of the private profile; the default
        forces a full recalculation whenever a document is loaded.
    timeout : float
        Seconds one call may take before LibreOffice is killed and the call fails.
    backend : {"auto", "uno", "convert-to"}
        "uno": one listening LibreOffice, a UNO client per call; "convert-to": one
        ``soffice --convert-to`` run per call; "auto": "uno" where a Python with ``uno``
        is found, else "convert-to".

    Examples
    --------
    >>> with LibreOffice("/usr/bin/soffice") as office:            # doctest: +SKIP
    ...     copy = office.recalculate(Path("book.xlsx"), Path("out"))
    """

    def __init__(
        self,
        soffice: str,
        *,
        recalc_mode: int = RECALC_ALWAYS,
        timeout: float = DEFAULT_TIMEOUT,
        backend: str = "auto",
    ) -> None:
        self.soffice = soffice
        self.recalc_mode = recalc_mode
        self.timeout = timeout
        self.python = find_uno_python(soffice) if backend in ("auto", "uno") else None
        if backend == "uno" and self.python is None:
            raise RecalcError("no Python with LibreOffice's uno module; set PERTBOOK_UNO_PYTHON")
        self.backend = "uno" if self.python else "convert-to"
        self.starts = 0  # how many times a LibreOffice process was started (tests read it)
        self._work = Path(tempfile.mkdtemp(prefix="pertbook-lo-"))
        self._profile = self._work / "profile"
        (self._profile / "user").mkdir(parents=True)
        (self._profile / "user" / "registrymodifications.xcu").write_text(
            PROFILE_TEMPLATE.format(mode=recalc_mode), encoding="utf-8"
        )
        self._pipe = f"pertbook_{os.getpid()}_{uuid.uuid4().hex[:12]}"
        self._server: subprocess.Popen | None = None
        self._lock = threading.Lock()
        # a test run that ends without closing us (an error, Ctrl-C) still stops LibreOffice
        self._running: list[subprocess.Popen | None] = [None]  # shared with the finalizer
        self._finalizer = weakref.finalize(self, _cleanup, self._work, self._running)

    # ------------------------------------------------------------------ lifecycle
    def __enter__(self) -> LibreOffice:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Stop the listening LibreOffice (if any) and remove the private profile."""
        with self._lock:
            self._stop_server()
        self._finalizer()

    def _command(self) -> list[str]:
        return [self.soffice, f"-env:UserInstallation={self._profile.as_uri()}", *_OPTIONS]

    def _env(self) -> dict[str, str]:
        return dict(os.environ, HOME=str(self._work))

    def _start_server(self) -> None:
        accept = f"--accept=pipe,name={self._pipe};urp;StarOffice.ComponentContext"
        log = open(self._work / "server.log", "ab")  # noqa: SIM115 - handed to the child
        try:
            self._server = subprocess.Popen(
                [*self._command(), accept],
                stdin=subprocess.DEVNULL,
                stdout=log,
                stderr=log,
                env=self._env(),
                start_new_session=True,
            )
        finally:
            log.close()
        self._running[0] = self._server
        self.starts += 1

    def _stop_server(self) -> None:
        if self._server is not None:
            kill_group(self._server, grace=5.0)
            self._server = None
            self._running[0] = None

    # ------------------------------------------------------------------ conversions
    def recalculate(self, xlsx: Path, outdir: Path) -> Path:
        """Recalculate ``xlsx`` and save LibreOffice's copy as ``outdir/<stem>.recalc.xlsx``."""
        return self.recalculate_many([xlsx], outdir)[0]

    def recalculate_many(self, books: list[Path], outdir: Path) -> list[Path]:
        """Recalculate several workbooks in one call; copies as ``outdir/<stem>.recalc.xlsx``.

        Raises :class:`RecalcError` naming the workbook LibreOffice could not load or
        save (the others of the call are still converted), or if the call times out.
        """
        sources = [Path(b).resolve() for b in books]
        for src in sources:
            if not src.is_file():
                raise RecalcError(f"no such workbook: {src}")
        if len({s.stem for s in sources}) != len(sources):
            raise RecalcError("workbooks of one call need different names")
        outdir = Path(outdir).resolve()
        outdir.mkdir(parents=True, exist_ok=True)
        targets = [outdir / f"{s.stem}.recalc.xlsx" for s in sources]
        for target in targets:  # a copy left by an earlier call must not pass for a new one
            if target.exists() and target not in sources:
                target.unlink()
        with self._lock:
            if self.backend == "uno":
                errors = self._run_uno(list(zip(sources, targets, strict=True)))
            else:
                errors = self._run_convert_to(sources, targets)
        for src, target in zip(sources, targets, strict=True):
            if src not in errors and (not target.is_file() or target.stat().st_size == 0):
                errors[src] = "no file written"
        if errors:
            raise RecalcError(
                "; ".join(
                    f"LibreOffice failed to convert {s.name}: {why}" for s, why in errors.items()
                )
            )
        return targets

    def _run_uno(self, jobs: list[tuple[Path, Path]]) -> dict[Path, str]:
        """Convert through the listening LibreOffice, starting (or restarting) it if needed."""
        for attempt in (1, 2):
            fresh = self._server is None or self._server.poll() is not None
            if fresh:
                self._stop_server()
                self._start_server()
            request = {
                "connect": f"pipe,name={self._pipe}",
                "wait": START_TIMEOUT if fresh else 5.0,
                "jobs": [[str(s), str(t)] for s, t in jobs],
            }
            rc, lines, text = self._client(request)
            if rc == 3 and attempt == 1:  # office unreachable: it died; start a new one
                self._stop_server()
                continue
            done = {Path(r["src"]): r for r in lines if "src" in r}
            if rc != 0 or len(done) != len(jobs):
                self._stop_server()  # a half-finished office is not trusted again
                said = " ".join([*(r["error"] for r in lines if "src" not in r), text])
                why = f"UNO client exit code {rc}: {said.strip() or 'no output'}{self._log_tail()}"
                return {s: why for s, _ in jobs if s not in done or not done[s]["ok"]}
            return {s: r["error"] for s, r in done.items() if not r["ok"]}
        raise AssertionError("unreachable")

    def _log_tail(self, size: int = 800) -> str:
        """The end of the listening LibreOffice's own output, for an error message."""
        log = self._work / "server.log"
        text = log.read_bytes()[-size:].decode("utf-8", "replace").strip() if log.is_file() else ""
        return f"; LibreOffice said: {text}" if text else ""

    def _client(self, request: dict) -> tuple[int, list[dict], str]:
        proc = subprocess.Popen(
            [self.python, str(CLIENT)],
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            env=self._env(),
            start_new_session=True,
        )
        try:
            out, err = proc.communicate(json.dumps(request).encode(), timeout=self.timeout)
        except subprocess.TimeoutExpired as exc:
            kill_group(proc)
            self._stop_server()
            names = ", ".join(Path(s).name for s, _ in request["jobs"])
            raise RecalcError(
                f"LibreOffice did not finish converting {names} within {self.timeout:g} s"
            ) from exc
        lines = [
            json.loads(x) for x in out.decode("utf-8", "replace").splitlines() if x.startswith("{")
        ]
        return proc.returncode, lines, err.decode("utf-8", "replace").strip()

    def _run_convert_to(self, sources: list[Path], targets: list[Path]) -> dict[Path, str]:
        """One ``soffice --convert-to`` for all ``sources``, then move each copy to its target."""
        staging = Path(tempfile.mkdtemp(prefix="out-", dir=self._work))
        cmd = [
            *self._command(),
            "--convert-to",
            f"xlsx:{XLSX_FILTER}",
            "--outdir",
            str(staging),
            *map(str, sources),
        ]
        proc = subprocess.Popen(
            cmd,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            env=self._env(),
            start_new_session=True,
        )
        self.starts += 1
        try:
            out, err = proc.communicate(timeout=self.timeout)
        except subprocess.TimeoutExpired as exc:
            kill_group(proc)
            names = ", ".join(s.name for s in sources)
            raise RecalcError(
                f"LibreOffice did not finish converting {names} within {self.timeout:g} s"
            ) from exc
        text = (out + err).decode("utf-8", "replace").strip()
        errors: dict[Path, str] = {}
        for src, target in zip(sources, targets, strict=True):
            produced = staging / f"{src.stem}.xlsx"
            if proc.returncode == 0 and produced.is_file() and produced.stat().st_size:
                shutil.move(str(produced), target)
            else:
                errors[src] = f"exit code {proc.returncode}: {text or 'no output'}"
        shutil.rmtree(staging, ignore_errors=True)
        return errors
