"""What ``pertbook convert`` and ``check`` do with odd files and where their outputs go.

What is checked against what:
- "not a regular file": the file types of POSIX ``stat`` (``S_ISFIFO``, ``S_ISCHR``; IEEE
  Std 1003.1, <sys/stat.h>) made with ``os.mkfifo`` and a symbolic link to ``/dev/zero``;
  a pipe opened for reading waits for a writer and ``/dev/zero`` never ends (POSIX
  ``open``/``read``), so the commands run in a child process under a timeout (a hang
  guard, not a speed check);
- "never replace an input": input bytes compared with hashlib's SHA-256 before and after,
  hard links made with ``os.link`` (same inode, POSIX ``link``);
- name limits: ``os.pathconf(folder, "PC_NAME_MAX")`` (POSIX ``{NAME_MAX}``, bytes of one
  path component), names measured with ``os.fsencode``;
- modes: a new file is created with the requested mode less the umask (POSIX ``open`` and
  ``umask``); 0666 is the mode ordinary tools ask for (common practice: shell redirection,
  ``touch``), so an output must end as ``0o666 & ~umask``, measured with ``os.stat``.
"""

from __future__ import annotations

import json
import os
import stat
import subprocess
import sys
from pathlib import Path

import pytest
from helpers import GOOD_ROWS, REPO, good_xlsx, sha256, write_csv

from converter import cli
from converter.api import fit_stem, name_limit, new_file_mode, process_umask

HANG_GUARD = 120.0  # seconds; only a guard against a hang, never a measure of speed


def main(capsys, *args):
    code = cli.main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def run(*args: object, umask: int | None = None, cwd: Path | None = None):
    """``python -m converter ARGS`` in a child process, with a hang guard and a umask."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    kw = {} if umask is None else {"umask": umask}
    return subprocess.run(
        [sys.executable, "-m", "converter", *map(str, args)],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=HANG_GUARD,
        check=False,
        **kw,
    )


def mode(path: Path) -> int:
    return stat.S_IMODE(path.stat().st_mode)


# --------------------------------------------------------------------------- not files
@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes are POSIX")
def test_pipe_and_device_are_refused_before_opening(tmp_path):
    os.mkfifo(tmp_path / "plan.csv")
    (tmp_path / "plan.xlsx").symlink_to("/dev/zero")
    good = good_xlsx(tmp_path / "real.xlsx")
    (tmp_path / "linked.xlsx").symlink_to(good)  # a link to a regular file is followed

    done = run("check", "plan.csv", "plan.xlsx", "linked.xlsx", cwd=tmp_path)
    assert done.returncode == 2, done.stderr
    assert "plan.csv: INVALID" in done.stdout and "plan.xlsx: INVALID" in done.stdout
    assert "linked.xlsx: valid" in done.stdout
    assert "plan.csv is a named pipe (FIFO), not a regular file" in done.stderr
    assert "plan.xlsx is a character device (through a symbolic link)" in done.stderr
    assert "Traceback" not in done.stderr

    done = run("convert", "plan.csv", "plan.xlsx", "linked.xlsx", "--no-simulation", cwd=tmp_path)
    assert done.returncode == 2, done.stderr
    assert "plan.csv: invalid input (1 problem(s)); no workbook written" in done.stderr
    assert "plan.xlsx: invalid input (1 problem(s)); no workbook written" in done.stderr
    results = sorted(p.name for p in tmp_path.iterdir() if ".analysis." in p.name)
    assert results == ["linked.analysis.xlsx"]
    assert stat.S_ISFIFO(os.lstat(tmp_path / "plan.csv").st_mode)  # left as it was
    assert os.readlink(tmp_path / "plan.xlsx") == "/dev/zero"


# --------------------------------------------------------------------------- inputs kept
def test_an_output_never_replaces_an_input_of_the_run(tmp_path, capsys):
    d = tmp_path / "d"
    d.mkdir()
    plan = good_xlsx(d / "x.xlsx")
    theirs = good_xlsx(d / "x.analysis.xlsx")  # the user's own file, given as an input
    before = sha256(theirs)
    code, out, err = main(capsys, "convert", plan, theirs, "--outdir", d, "--no-simulation")
    assert code == 2
    assert (
        f"{plan}: not converted: its result {d / 'x.analysis.xlsx'} would replace "
        f"{theirs}, an input of this run"
    ) in err
    assert sha256(theirs) == before
    assert (d / "x.analysis.analysis.xlsx").exists()  # the other input is converted
    assert f"{plan}: wrote" not in out


def test_a_hard_link_or_the_json_of_an_input_is_never_replaced(tmp_path, capsys):
    src, out_dir = tmp_path / "src", tmp_path / "out"
    src.mkdir()
    out_dir.mkdir()
    plan = good_xlsx(src / "plan.xlsx")
    keep = good_xlsx(src / "keep.xlsx")
    os.link(keep, out_dir / "plan.analysis.xlsx")  # the same file under the result's name
    code, _, err = main(capsys, "convert", plan, keep, "--outdir", out_dir, "--no-simulation")
    assert code == 2
    assert f"{plan}: not converted" in err and f"would replace {keep}" in err
    assert os.path.samefile(keep, out_dir / "plan.analysis.xlsx")  # still the same file

    notes = src / "plan.analysis.json"
    notes.write_text('{"mine": true}', encoding="utf-8")
    code, _, err = main(capsys, "convert", plan, notes, "--no-simulation", "--json")
    assert code == 2 and f"would replace {notes}" in err
    assert notes.read_text(encoding="utf-8") == '{"mine": true}'
    code, _, _ = main(capsys, "convert", plan, notes, "--no-simulation")  # no JSON asked
    assert code == 2  # the .json input itself is not a schedule
    assert (src / "plan.analysis.xlsx").exists()


def test_every_input_of_a_run_gets_its_own_result(tmp_path, capsys):
    given = []
    for folder, suffix in (("a", ".xlsx"), ("b", ".xlsx"), ("c", ".csv"), ("d", ".xlsx")):
        (tmp_path / folder).mkdir()
        path = tmp_path / folder / f"plan{suffix}"
        good_xlsx(path) if suffix == ".xlsx" else write_csv(path, GOOD_ROWS)
        given.append(path)
    out_dir = tmp_path / "out"
    # README "Command line": the first keeps <stem>, later ones <stem>-<ext>, -<ext>-2, ...
    expected = ["plan", "plan-xlsx", "plan-csv", "plan-xlsx-2"]
    for _ in range(2):  # deterministic: the same names on a second run
        code, out, err = main(
            capsys, "convert", *given, "--outdir", out_dir, "--no-simulation", "--json"
        )
        assert code == 0, err
        for path, stem in zip(given, expected):
            data = json.loads((out_dir / f"{stem}.analysis.json").read_text(encoding="utf-8"))
            assert Path(data["input"]["file"]) == path
            assert data["input"]["sha256"] == sha256(path)
            assert f"{path}: wrote {out_dir / (stem + '.analysis.xlsx')}" in out
    assert len(list(out_dir.iterdir())) == 2 * len(given)


def test_long_input_names_give_results_that_fit(tmp_path, capsys):
    limit = name_limit(tmp_path)
    long_stem = "L" * (limit - 7)  # + ".xlsx": a legal name two bytes short of the limit
    sibling = long_stem[:-1] + "M"  # the same long prefix: its result must differ
    wide = "é" * ((limit - 4) // 2)  # two bytes each in UTF-8, + ".csv"
    paths = [good_xlsx(tmp_path / f"{long_stem}.xlsx"), good_xlsx(tmp_path / f"{sibling}.xlsx")]
    if sys.getfilesystemencoding().lower().replace("-", "") == "utf8":
        paths.append(write_csv(tmp_path / f"{wide}.csv", GOOD_ROWS))
    code, _, err = main(
        capsys, "convert", *paths, "--outdir", tmp_path / "out", "--no-simulation", "--json"
    )
    assert code == 0, err
    results = sorted(p.name for p in (tmp_path / "out").iterdir())
    assert len(results) == 2 * len(paths)
    for name in results:
        assert len(os.fsencode(name)) <= limit, name
        assert "~" in name  # shortened: prefix + "~" + 8 hex digits of the stem's SHA-256
    for stem in (long_stem, sibling):
        mine = [n for n in results if n.startswith(stem[:100]) and n.endswith(".xlsx")]
        assert len(mine) == 2  # the two long stems share 100 characters: both results kept


def test_fit_stem_counts_bytes_and_keeps_stems_apart():
    # bytes of the file-system encoding (POSIX NAME_MAX counts bytes, not characters)
    assert fit_stem("plan", [".analysis.xlsx"], 255) == "plan"
    a, b = ("ü" * 200 + tail for tail in ("a", "b"))
    fa, fb = fit_stem(a, [".analysis.xlsx"], 255), fit_stem(b, [".analysis.xlsx"], 255)
    assert fa != fb and fa == fit_stem(a, [".analysis.xlsx"], 255)
    for short in (fa, fb):
        assert len(os.fsencode(short + ".analysis.xlsx")) <= 255
        assert short.startswith("ü" * 100)
    with pytest.raises(OSError):
        fit_stem("plan", ["x" * 300], 255)  # not even one character fits


def test_name_limit_is_the_file_systems(tmp_path):
    if not hasattr(os, "pathconf"):
        assert name_limit(tmp_path) == 255
        return
    assert name_limit(tmp_path) == os.pathconf(tmp_path, "PC_NAME_MAX")
    assert name_limit(tmp_path / "not" / "yet") == os.pathconf(tmp_path, "PC_NAME_MAX")


# --------------------------------------------------------------------------- modes
def test_umask_is_read_without_changing_it():
    old = os.umask(0o022)
    os.umask(old)
    assert process_umask() == old and new_file_mode() == 0o666 & ~old
    probe = os.umask(old)  # still the same afterwards
    assert probe == old


@pytest.mark.skipif(os.name != "posix", reason="POSIX file modes")
@pytest.mark.parametrize("umask", [0o022, 0o002], ids=["umask022", "umask002"])
def test_outputs_get_the_ordinary_mode_under_the_umask(tmp_path, umask):
    good = good_xlsx(tmp_path / "plan.xlsx")
    bad = write_csv(tmp_path / "bad.csv", [GOOD_ROWS[0], ["A", "a", "Q7", 1, 2, 3]])
    out_dir = tmp_path / "out"
    done = run("convert", good, bad, "--outdir", out_dir, "--no-simulation", "--json", umask=umask)
    assert done.returncode == 2, done.stderr
    done = run("template", tmp_path / "blank.xlsx", umask=umask)
    assert done.returncode == 0, done.stderr
    outputs = ["plan.analysis.xlsx", "plan.analysis.json", "bad.analysis.json"]
    assert sorted(p.name for p in out_dir.iterdir()) == sorted(outputs)  # no temp files
    for path in [out_dir / name for name in outputs] + [tmp_path / "blank.xlsx"]:
        assert mode(path) == 0o666 & ~umask, (path.name, oct(mode(path)))
