"""The pieces of the Recalculate plan command that run without LibreOffice.

The extension file built from the repository, the runner the macro starts in
the user's Python, the lock-file exception for the LibreOffice that holds the
plan open, and ``wzq calc``. The command pressed in a real LibreOffice is in
``tests/io/test_calc_command.py``.
"""

from __future__ import annotations

import ast
import fnmatch
import io
import json
import os
import sys
import tomllib
import zipfile
from pathlib import Path
from xml.etree import ElementTree

import openpyxl
import pytest
from PIL import Image
from workbook_helpers import fill_template, table_cell

import wzq
from wzq import cli
from wzq.cli import calc as commands
from wzq.cli import calc_runner as runner
from wzq.engine.plan import PlanError
from wzq.io.jsonplan import load_plan
from wzq.io.office import build
from wzq.io.workbook import layout
from wzq.io.workbook.reader import read_plan
from wzq.io.workbook.run import run_to
from wzq.io.workbook.save import check_writable, lock_files, own_office_lock
from wzq.present.tables import summary_lines

ROOT = Path(__file__).resolve().parents[2]
EXAMPLES = ROOT / "examples"
SOURCES = ROOT / "wzq" / "io" / "office" / "extension"
PROFILE = "file:///home/ana/.config/libreoffice/4"


# --- the extension file ------------------------------------------------------------------------


def test_the_build_is_reproducible_and_holds_every_source(tmp_path):
    a = build.build_extension(tmp_path / "a", "/opt/py/bin/python3")
    b = build.build_extension(tmp_path / "b", "/opt/py/bin/python3")
    assert a.name == b.name == "wzq-calc.oxt"
    assert a.read_bytes() == b.read_bytes()
    names = zipfile.ZipFile(a).namelist()
    sources = sorted(
        p.relative_to(SOURCES).as_posix()
        for p in SOURCES.rglob("*")
        if p.is_file() and "__pycache__" not in p.parts
    )
    icons = ["icons/recalculate_16.png", "icons/recalculate_26.png", "icons/wzq_42.png"]
    assert names == sorted([*sources, *icons])


def test_the_extension_files_are_filled_in_and_well_formed():
    files = build.extension_files("/opt/my py/bin/python3", shared=False)
    for name, data in files.items():
        if name.endswith((".xml", ".xcu", ".xcs")):
            ElementTree.fromstring(data)  # well-formed
        if not name.endswith(".png"):
            for marker in (b"@VERSION@", b"@PYTHON@", b"@SCRIPT_URL@", b"@CAUTION@"):
                assert marker not in data, name
    ns = {"oor": "http://openoffice.org/2001/registry"}
    schema = ElementTree.fromstring(files["Settings.xcs"])
    props = {
        p.get("{http://openoffice.org/2001/registry}name"): p.findtext("value")
        for p in schema.iter("prop")
    }
    assert props == {
        "Python": "/opt/my py/bin/python3",
        "SaveWithoutAsking": "false",
        "TimeoutSeconds": "600",
        "LastReport": "",
    }
    addons = ElementTree.fromstring(files["Addons.xcu"])
    urls = {v.text for v in addons.iter("value") if v.text and "script" in v.text}
    assert urls == {build.script_url()}
    assert build.script_url() == (
        "vnd.sun.star.script:wzq-calc.oxt|python|wzq_calc.py$recalculate_plan"
        "?language=Python&location=user:uno_packages"
    )
    assert build.script_url(shared=True).endswith("location=share:uno_packages")
    assert addons.find(".//node[@oor:name='OfficeMenuBar']", ns) is not None
    description = ElementTree.fromstring(files["description.xml"])
    d = "{http://openoffice.org/extensions/description/2006}"
    assert description.find(f"{d}identifier").get("value") == build.IDENTIFIER
    assert description.find(f"{d}version").get("value") == wzq.__version__
    assert wzq.CAUTION in files["description/en.txt"].decode()
    manifest = ElementTree.fromstring(files["META-INF/manifest.xml"])
    m = "{http://openoffice.org/2001/manifest}"
    listed = {e.get(f"{m}full-path") for e in manifest.iter(f"{m}file-entry")}
    assert listed == {"python/", "Settings.xcs", "Addons.xcu"}
    assert all(p == "python/" or p in files for p in listed)


def test_the_icons_are_pngs_of_their_sizes():
    files = build.extension_files()
    for name, size in (("recalculate_16", 16), ("recalculate_26", 26), ("wzq_42", 42)):
        im = Image.open(io.BytesIO(files[f"icons/{name}.png"]))
        assert im.format == "PNG" and im.size == (size, size) and im.mode == "RGBA"
        # the corners are transparent (a rounded tile) and the middle is not
        assert im.getpixel((0, 0))[3] == 0
        assert im.getpixel((size // 2, size // 2))[3] == 255


def test_the_macro_is_the_addressed_function_and_runs_on_python_3_8():
    source = (SOURCES / "python" / build.SCRIPT_FILE).read_text()
    tree = ast.parse(source, feature_version=(3, 8))  # LibreOffice may bundle Python 3.8
    functions = {n.name for n in tree.body if isinstance(n, ast.FunctionDef)}
    assert build.SCRIPT_FUNCTION in functions
    exported = next(
        n for n in tree.body if isinstance(n, ast.Assign) and n.targets[0].id == "g_exportedScripts"
    )
    assert [e.id for e in exported.value.elts] == [build.SCRIPT_FUNCTION]
    # it never imports wzq: LibreOffice's own Python does not have it
    imported = {
        a.name.split(".")[0]
        for n in ast.walk(tree)
        if isinstance(n, ast.Import | ast.ImportFrom)
        for a in (n.names if isinstance(n, ast.Import) else [ast.alias(n.module or "")])
    }
    assert "wzq" not in imported
    # the runner's output format, as the macro reads it
    assert f'MARK = "{runner.MARK}"' in source
    assert f"PROTOCOL = {runner.PROTOCOL}" in source


def test_package_data_ships_every_extension_file():
    data = tomllib.loads((ROOT / "pyproject.toml").read_text())
    globs = data["tool"]["setuptools"]["package-data"]["wzq"]
    for p in SOURCES.rglob("*"):
        if p.is_file() and "__pycache__" not in p.parts:
            rel = p.relative_to(ROOT / "wzq").as_posix()
            matches = [
                g for g in globs if fnmatch.fnmatch(rel, g) and g.count("/") == rel.count("/")
            ]
            assert matches, rel


# --- the runner ---------------------------------------------------------------------------------


@pytest.fixture
def plan_path(tmp_path) -> Path:
    return fill_template(load_plan(EXAMPLES / "fenwick_downs_weekend.json"), tmp_path / "p.xlsx")


def test_runner_reports_a_run(plan_path, capsys):
    assert runner.main([str(plan_path)]) == cli.EXIT_OK
    line = capsys.readouterr().out.strip()
    assert line.startswith(runner.MARK)
    outcome = json.loads(line[len(runner.MARK) :])
    expected = wzq.analyse(read_plan(plan_path))
    assert outcome["status"] == "done" and outcome["protocol"] == runner.PROTOCOL
    assert outcome["target"] == str(plan_path) and outcome["copied"] is False
    assert [tuple(x) for x in outcome["summary"]] == summary_lines(expected)
    assert layout.RESULTS in openpyxl.load_workbook(plan_path).sheetnames


def test_runner_lists_problems_with_sheet_and_cell(plan_path, capsys):
    book = openpyxl.load_workbook(plan_path)
    cell = table_cell(book, layout.DEMAND_TABLE, 5, layout.DEMAND_COLUMNS[2])
    cell.value = "lots"
    book.save(plan_path)
    data = plan_path.read_bytes()
    assert runner.main([str(plan_path)]) == cli.EXIT_INPUT
    outcome = json.loads(capsys.readouterr().out.strip()[len(runner.MARK) :])
    assert outcome["status"] == "problems"
    assert outcome["problems"] == [
        {
            "where": f"Demand!{cell.coordinate}",
            "message": "Demand: 'lots' is text, not a number; type only the number, "
            "without its unit",
        }
    ]
    assert plan_path.read_bytes() == data


def test_runner_puts_an_unexpected_error_in_the_log_not_in_the_answer(
    plan_path, tmp_path, monkeypatch, capsys
):
    def broken(*args, **kwargs):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr("wzq.io.workbook.run.run_to", broken)
    log = tmp_path / "calc.log"
    assert runner.main([str(plan_path), "--log", str(log)]) == cli.EXIT_FAILURE
    outcome = json.loads(capsys.readouterr().out.strip()[len(runner.MARK) :])
    assert outcome == {
        "status": "error",
        "error": "RuntimeError: disk on fire",
        "log": str(log),
        "protocol": runner.PROTOCOL,
    }
    assert "Traceback (most recent call last)" in log.read_text()


# --- the lock file of the LibreOffice that holds the plan open -----------------------------------


def _me() -> tuple[str, str]:
    import socket

    from wzq.io.workbook.save import _login

    return _login(), socket.gethostname()


def _office_lock(target: Path, entry: str) -> Path:
    lock = lock_files(target)[1]
    lock.write_text(entry, encoding="utf-8")
    return lock


def test_own_lock_needs_this_login_this_host_and_that_profile(tmp_path):
    login, host = _me()
    target = tmp_path / "plan.xlsx"
    cases = {
        f",{login},{host},04.05.2027 21:00,{PROFILE};": True,
        f"Ana Lopez,{login},{host.upper()}.example.org,04.05.2027 21:00,{PROFILE}/;": True,
        f",{login},{host},04.05.2027 21:00,file:///home/ana/.config/libreoffice/5;": False,
        f",someone-else,{host},04.05.2027 21:00,{PROFILE};": False,
        f",{login},another-desk,04.05.2027 21:00,{PROFILE};": False,
        f"Lopez\\, Ana,{login},{host},04.05.2027 21:00,{PROFILE};": True,  # escaped comma
        f",{login},{host};": False,  # a short entry
        "": False,
    }
    for entry, own in cases.items():
        lock = _office_lock(target, entry)
        assert own_office_lock(lock, PROFILE) is own, entry
        assert own_office_lock(lock, None) is False
    # spaces in the profile's folder: LibreOffice writes them URL-quoted
    lock = _office_lock(target, f",{login},{host},x,file:///C:/Users/Ana%20Lopez/LO;")
    assert own_office_lock(lock, "file:///C:/Users/Ana Lopez/LO")


def test_only_the_stated_profile_lets_a_save_past_its_lock(tmp_path):
    login, host = _me()
    target = tmp_path / "plan.xlsx"
    target.write_bytes(b"")
    _office_lock(target, f",{login},{host},04.05.2027 21:00,{PROFILE};")
    with pytest.raises(PlanError, match="is open in LibreOffice"):
        check_writable(target)  # the command line: refused as before
    with pytest.raises(PlanError, match="is open in LibreOffice"):
        check_writable(target, office_profile="file:///home/bo/.config/libreoffice/4")
    check_writable(target, office_profile=PROFILE)  # the instance that holds it open
    lock_files(target)[0].write_text("excel")  # Excel's lock is never the caller's own
    with pytest.raises(PlanError, match="is open in Excel"):
        check_writable(target, office_profile=PROFILE)


def test_run_to_writes_past_its_own_lock_only(plan_path):
    login, host = _me()
    lock = _office_lock(plan_path, f",{login},{host},04.05.2027 21:00,{PROFILE};")
    data = plan_path.read_bytes()
    with pytest.raises(PlanError, match="is open in LibreOffice"):
        run_to(plan_path, office_profile="file:///home/bo/.config/libreoffice/4")
    assert plan_path.read_bytes() == data
    done = run_to(plan_path, office_profile=PROFILE)
    assert done.target == plan_path and plan_path.read_bytes() != data
    assert lock.exists()  # LibreOffice's lock is left alone


# --- wzq calc -----------------------------------------------------------------------------------


def test_unopkg_command_lines(tmp_path):
    add = commands.unopkg_command("add", "/t/wzq-calc.oxt", unopkg="/lo/unopkg")
    assert add == ["/lo/unopkg", "add", "--force", "--suppress-license", "/t/wzq-calc.oxt"]
    shared = commands.unopkg_command(
        "remove", build.IDENTIFIER, unopkg="/lo/unopkg", all_users=True, profile=str(tmp_path)
    )
    assert shared == [
        "/lo/unopkg",
        "remove",
        "--shared",
        "--suppress-license",
        f"-env:UserInstallation={tmp_path.resolve().as_uri()}",
        "org.wzq.calc.recalculate",
    ]


@pytest.fixture
def fake_unopkg(tmp_path, monkeypatch) -> tuple[Path, Path]:
    """A stand-in unopkg that records its arguments and keeps a copy of the extension."""
    record = tmp_path / "calls.txt"
    tool = tmp_path / "unopkg"
    tool.write_text(
        "#!/bin/sh\n"
        f'echo "$@" >> "{record}"\n'
        f'for a in "$@"; do case "$a" in *.oxt) cp "$a" "{tmp_path}/seen.oxt";; esac; done\n'
    )
    tool.chmod(0o755)
    monkeypatch.setattr(commands, "_running_as_root", lambda: False)
    return tool, record


@pytest.mark.skipif(os.name != "posix", reason="the stand-in unopkg is a shell script")
def test_install_builds_for_this_python_and_adds_it(fake_unopkg, tmp_path, capsys):
    tool, record = fake_unopkg
    code = cli.main(["calc", "install", "--unopkg", str(tool), "--profile", str(tmp_path / "p")])
    assert code == cli.EXIT_OK
    words = record.read_text().split()
    assert words[:3] == ["add", "--force", "--suppress-license"]
    assert words[3] == f"-env:UserInstallation={(tmp_path / 'p').resolve().as_uri()}"
    assert words[4].endswith("/wzq-calc.oxt")
    xcs = zipfile.ZipFile(tmp_path / "seen.oxt").read("Settings.xcs").decode()
    assert f"<value>{sys.executable}</value>" in xcs
    assert "wzq > Recalculate plan" in capsys.readouterr().out
    assert cli.main(["calc", "remove", "--unopkg", str(tool)]) == cli.EXIT_OK
    assert record.read_text().splitlines()[-1] == "remove --suppress-license " + build.IDENTIFIER


def test_as_root_a_per_user_install_is_refused_with_what_to_do(monkeypatch, capsys):
    monkeypatch.setattr(commands, "_running_as_root", lambda: True)
    assert cli.main(["calc", "install"]) == cli.EXIT_INPUT
    err = capsys.readouterr().err
    assert "when run as root" in err and "--all-users" in err


def test_calc_build_writes_the_extension_and_install_takes_no_folder(tmp_path, capsys):
    assert cli.main(["calc", "build", str(tmp_path)]) == cli.EXIT_OK
    assert zipfile.is_zipfile(tmp_path / build.OXT_NAME)
    assert cli.main(["calc", "install", str(tmp_path)]) == cli.EXIT_INPUT
    assert "takes no folder" in capsys.readouterr().err
    with pytest.raises(PlanError, match="no such file"):
        commands.find_unopkg(str(tmp_path / "nowhere" / "unopkg"))


@pytest.mark.skipif(os.name != "posix", reason="PATH folders with python3 executables")
def test_office_env_leaves_other_pythons_off_the_path(tmp_path):
    other = tmp_path / "pyenv" / "bin"
    other.mkdir(parents=True)
    (other / "python3").write_text("#!/bin/sh\n")
    plain = tmp_path / "tools"
    plain.mkdir()
    env = commands.office_env(
        {"PATH": os.pathsep.join([str(other), str(plain), "/usr/bin"]), "PYTHONHOME": "/x"}
    )
    assert env["PATH"].split(os.pathsep) == [str(plain), "/usr/bin"]
    assert "PYTHONHOME" not in env
