"""Golden files: the expected JSON and workbook parts of each sample, in reviewable text.

The converter's output for every sample in ``samples/`` is kept under
``tests/golden/<stem>/``: ``convert.json`` (the ``--json`` summary) and ``xlsx/<part>``
for every part of the workbook package, each XML part pretty-printed deterministically.
tests/write/test_golden.py converts the samples again and compares part by part;
tests/golden/regenerate.py rewrites the files after a deliberate change. The approach is
the one XlsxWriter's own test suite takes (it compares the XML parts of the files it
writes with those of files saved by Excel).

Normalisation (nothing else is changed):

- JSON: absolute paths of the sample folder and of the output folder become
  ``<samples>`` and ``<outdir>``; written with two-space indent, keys in output order.
- XML: whitespace between elements is dropped; every element whose children are all
  leaves (cells, points, runs of a style) is one line, others open and close on lines of
  their own, indented two spaces per level; attributes keep their order; line breaks
  inside text are written as ``&#10;`` so each element stays on one line.
- Other parts (none today) are recorded by size and SHA-256.

Not a test module.
"""

from __future__ import annotations

import difflib
import hashlib
import json
import re
import zipfile
from pathlib import Path
from xml.dom import minidom

REPO = Path(__file__).resolve().parents[2]
SAMPLES = REPO / "samples"
GOLDEN = REPO / "tests" / "golden"
SAMPLE_FILES = (
    "warehouse-fitout.xlsx",
    "clinic-it-rollout.xlsx",
    "boiler-shutdown.csv",
    "substation-upgrade.xlsx",
)
JSON_NAME = "convert.json"
PARTS_DIR = "xlsx"
MANIFEST = "parts.txt"  # part names in package order, so added or dropped parts show

_DECLARATION = re.compile(rb"^\s*(<\?xml[^>]*\?>)")


def _escape(text: str, quote: bool = False) -> str:
    text = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    if quote:
        text = text.replace('"', "&quot;")
    return text.replace("\r", "&#13;").replace("\n", "&#10;").replace("\t", "&#9;")


def _open_tag(el: minidom.Element) -> str:
    attrs = "".join(f' {k}="{_escape(v, quote=True)}"' for k, v in el.attributes.items())
    return f"<{el.tagName}{attrs}"


def _children(el: minidom.Element) -> list[minidom.Node]:
    """Element and text children; whitespace-only text between elements dropped."""
    kids = list(el.childNodes)
    has_elements = any(k.nodeType == k.ELEMENT_NODE for k in kids)
    out = []
    for k in kids:
        if k.nodeType in (k.TEXT_NODE, k.CDATA_SECTION_NODE):
            if has_elements and not k.data.strip():
                continue
            out.append(k)
        elif k.nodeType == k.ELEMENT_NODE:
            out.append(k)
    return out


def _inline(node: minidom.Node) -> str:
    """One element (or text) on one line."""
    if node.nodeType != node.ELEMENT_NODE:
        return _escape(node.data)
    kids = _children(node)
    if not kids:
        return _open_tag(node) + "/>"
    return _open_tag(node) + ">" + "".join(_inline(k) for k in kids) + f"</{node.tagName}>"


def _is_leaf(node: minidom.Node) -> bool:
    return node.nodeType != node.ELEMENT_NODE or all(
        k.nodeType != k.ELEMENT_NODE for k in _children(node)
    )


def _lines(node: minidom.Element, depth: int, out: list[str]) -> None:
    pad = "  " * depth
    kids = _children(node)
    if all(_is_leaf(k) for k in kids):
        out.append(pad + _inline(node))
        return
    out.append(pad + _open_tag(node) + ">")
    for k in kids:
        if k.nodeType == k.ELEMENT_NODE:
            _lines(k, depth + 1, out)
        else:
            out.append("  " * (depth + 1) + _escape(k.data))
    out.append(f"{pad}</{node.tagName}>")


def pretty_xml(data: bytes) -> str:
    """Deterministic, line-oriented text of an XML part (see the module notes).

    Examples
    --------
    >>> print(pretty_xml(b'<a x="1"><b><c>t</c><d/></b><e>u</e></a>'))
    <a x="1">
      <b><c>t</c><d/></b>
      <e>u</e>
    </a>
    <BLANKLINE>
    """
    out: list[str] = []
    found = _DECLARATION.match(data)
    if found:
        out.append(found.group(1).decode("utf-8"))
    _lines(minidom.parseString(data).documentElement, 0, out)
    return "\n".join(out) + "\n"


def is_xml(name: str) -> bool:
    return name.endswith((".xml", ".rels", ".vml"))


def sheet_titles(z: zipfile.ZipFile) -> dict[str, str]:
    """Worksheet part name -> sheet title, from xl/workbook.xml and its relationships."""
    rel_ns = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
    rels = minidom.parseString(z.read("xl/_rels/workbook.xml.rels"))
    target = {
        r.getAttribute("Id"): r.getAttribute("Target")
        for r in rels.getElementsByTagName("Relationship")
    }
    book = minidom.parseString(z.read("xl/workbook.xml"))
    out = {}
    for sheet in book.getElementsByTagName("sheet"):
        where = target[sheet.getAttributeNS(rel_ns, "id")]
        out[where.lstrip("/") if where.startswith("/") else f"xl/{where}"] = sheet.getAttribute(
            "name"
        )
    return out


def workbook_parts(xlsx: Path) -> dict[str, str]:
    """Part name -> normalised text, for every part of the package, in package order.

    Plus ``parts.txt``: the part names in package order, each worksheet with its title.
    """
    parts: dict[str, str] = {}
    with zipfile.ZipFile(xlsx) as z:
        titles = sheet_titles(z)
        for name in z.namelist():
            data = z.read(name)
            if is_xml(name):
                parts[name] = pretty_xml(data)
            else:
                parts[name] = f"{len(data)} bytes, sha256 {hashlib.sha256(data).hexdigest()}\n"
    parts[MANIFEST] = "".join(
        f"{n}  (sheet {titles[n]!r})\n" if n in titles else f"{n}\n" for n in parts
    )
    return parts


def normalise_json(text: str, outdir: Path) -> str:
    """The ``--json`` summary with the machine's absolute paths replaced by placeholders."""

    def clean(value: object) -> object:
        if isinstance(value, str):
            for folder, token in (
                (Path(outdir).resolve(), "<outdir>"),
                (SAMPLES.resolve(), "<samples>"),
            ):
                value = value.replace(str(folder), token)
            return value
        if isinstance(value, list):
            return [clean(v) for v in value]
        if isinstance(value, dict):
            return {k: clean(v) for k, v in value.items()}
        return value

    return json.dumps(clean(json.loads(text)), indent=2, ensure_ascii=False) + "\n"


def expected_files(stem: str, parts: dict[str, str], json_text: str) -> dict[str, str]:
    """Relative path under ``tests/golden/<stem>/`` -> text, for one sample."""
    files = {JSON_NAME: json_text}
    for name, text in parts.items():
        files[name if name == MANIFEST else f"{PARTS_DIR}/{name}"] = text
    return files


def convert_sample(sample: Path, outdir: Path) -> dict[str, str]:
    """``pertbook convert <sample> --json --outdir <outdir>`` in this process; golden files.

    Uses whatever ``converter`` package is first on ``sys.path`` (the working tree, or
    an older checkout when regenerating from it).
    """
    import contextlib
    import io

    from converter.cli import main

    outdir.mkdir(parents=True, exist_ok=True)
    with contextlib.redirect_stdout(io.StringIO()) as said:
        code = main(["convert", str(sample), "--json", "--outdir", str(outdir)])
    if code != 0:
        raise RuntimeError(f"pertbook convert {sample.name} exited {code}: {said.getvalue()}")
    stem = sample.name.rsplit(".", 1)[0]
    json_text = (outdir / f"{stem}.analysis.json").read_text(encoding="utf-8")
    return expected_files(
        stem, workbook_parts(outdir / f"{stem}.analysis.xlsx"), normalise_json(json_text, outdir)
    )


def read_golden(stem: str) -> dict[str, str]:
    """The committed golden files of one sample (relative path -> text)."""
    root = GOLDEN / stem
    return {
        p.relative_to(root).as_posix(): p.read_text(encoding="utf-8")
        for p in sorted(root.rglob("*"))
        if p.is_file()
    }


def diff_text(expected: str, got: str, name: str, limit: int = 60) -> str:
    """A unified diff of one part, cut to its first ``limit`` lines, with the total."""
    lines = list(
        difflib.unified_diff(
            expected.splitlines(),
            got.splitlines(),
            f"golden/{name}",
            f"produced/{name}",
            lineterm="",
            n=2,
        )
    )
    changed = sum(1 for x in lines if x[:1] in "+-" and x[:3] not in ("+++", "---"))
    shown = "\n".join(lines[:limit])
    more = f"\n... ({len(lines) - limit} more diff lines)" if len(lines) > limit else ""
    return f"{name}: {changed} changed lines\n{shown}{more}"
