"""Recalculate plan: wzq's command in LibreOffice Calc.

This file runs inside LibreOffice's own Python (its script provider), which
does not have wzq. The command:

1. takes the spreadsheet in front (or the one passed as the first argument by a
   script), which must be a plan workbook saved as .xlsx or .xlsm;
2. saves it when it has unsaved changes, after asking (a user who ticked
   "Always save without asking", or a test, sets ``SaveWithoutAsking`` in the
   extension's settings and is not asked);
3. runs ``PYTHON -m wzq.cli.calc_runner`` with the user's Python (the one that
   installed the extension, remembered in the extension's settings; if that one
   is gone, the first ``python3`` / ``python`` on the PATH that has wzq, which is
   then remembered). wzq's file backend does the work, with every guarantee of
   ``wzq run``: atomic save, results to a copy when the workbook holds parts wzq
   cannot keep, lock files respected (this LibreOffice's own lock file on the
   open plan is the one exception: its user profile is passed along);
4. reloads the document with the results, or opens the copy;
5. shows problems in a dialog, with sheet and cell, never a traceback.

The text of every message shown is also kept in the extension's setting
``LastReport`` (Tools > Options > Advanced > Expert Configuration, search
"org.wzq"), so it can be copied, and read back by a test through UNO.

Kept compatible with Python 3.8 (the Python some LibreOffice builds bundle).
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
import time
import traceback

import uno
from com.sun.star.awt.MessageBoxButtons import BUTTONS_OK
from com.sun.star.awt.MessageBoxType import ERRORBOX, INFOBOX, WARNINGBOX
from com.sun.star.beans import PropertyValue

#: The extension's settings (Settings.xcs in the extension).
SETTINGS = "/org.wzq.calc.Settings/Recalculate"
#: The line of the runner's output that carries its outcome (wzq.cli.calc_runner.MARK).
MARK = "wzq-calc-outcome:"
#: The runner's output format this macro understands (wzq.cli.calc_runner.PROTOCOL).
PROTOCOL = 1
TITLE = "Recalculate plan"
SUFFIXES = (".xlsx", ".xlsm")
#: Problems listed in the dialog; the rest are counted (``wzq check`` lists them all).
SHOWN_PROBLEMS = 12
#: A log of unexpected errors, in LibreOffice's user profile folder.
LOG_NAME = "wzq-calc.log"


# --- pure text (no UNO; tested on its own) ---------------------------------------------------


def problems_text(name: str, problems: list, limit: int = SHOWN_PROBLEMS) -> str:
    """The dialog text for input problems: each with its sheet and cell, then a count."""
    lines = [f"- {p.get('where', '')}: {p.get('message', '')}" for p in problems[:limit]]
    more = len(problems) - limit
    if more > 0:
        lines.append(f"... and {more} more (wzq check {name} lists them all).")
    n = len(problems)
    return (
        f"{name}: {n} problem{'' if n == 1 else 's'} in the inputs; nothing was recalculated "
        "and the workbook was not changed.\n\n"
        + "\n".join(lines)
        + "\n\nFix each item, then choose Recalculate plan again."
    )


def done_text(name: str, outcome: dict) -> str:
    """A short account of a run that worked: where the results went and the headline."""
    head = f"{name}: recalculated."
    if outcome.get("copied"):
        head = "{}: recalculated; the results are in a copy, {} (opened beside it).".format(
            name,
            os.path.basename(outcome.get("target", "")),
        )
    lines = [head]
    lines += [f"{label}: {text}" for label, text in outcome.get("summary", [])]
    lines += [f"Note: {note}" for note in outcome.get("notes", [])]
    lines += [f"Warning: {w}" for w in outcome.get("warnings", [])]
    return "\n".join(lines)


def parse_outcome(stdout: str) -> dict | None:
    """The runner's outcome from its output (the last line with :data:`MARK`), or None."""
    for line in reversed(stdout.splitlines()):
        if line.startswith(MARK):
            try:
                outcome = json.loads(line[len(MARK) :])
            except ValueError:
                return None
            return outcome if isinstance(outcome, dict) else None
    return None


def missing_wzq_text(python: str, detail: str) -> str:
    return (
        f"wzq is not installed in the Python this command uses:\n{python}\n\n{detail}\n\n"
        f"Install it there ({_quoted(python)} -m pip install wzq), or, in the Python that has wzq, "
        "run: wzq calc install"
    )


def _quoted(path: str) -> str:
    return f'"{path}"' if " " in path else path


# --- LibreOffice ----------------------------------------------------------------------------


def _prop(name, value):
    p = PropertyValue()
    p.Name = name
    p.Value = value
    return p


def _settings(ctx, update: bool = False):
    provider = ctx.ServiceManager.createInstanceWithContext(
        "com.sun.star.configuration.ConfigurationProvider", ctx
    )
    service = "com.sun.star.configuration.Configuration%sAccess" % ("Update" if update else "")
    return provider.createInstanceWithArguments(service, (_prop("nodepath", SETTINGS),))


def _setting(ctx, name: str, default=None):
    try:
        value = _settings(ctx).getByName(name)
    except Exception:
        return default
    return default if value is None else value


def _remember(ctx, **values) -> None:
    try:
        node = _settings(ctx, update=True)
        for name, value in values.items():
            node.replaceByName(name, value)
        node.commitChanges()
    except Exception:
        pass  # a setting that cannot be kept is asked for again next time


def _expand(ctx, text: str) -> str:
    return ctx.getByName("/singletons/com.sun.star.util.theMacroExpander").expandMacros(text)


def office_profile(ctx) -> str:
    """This LibreOffice's user profile (``UserInstallation``), as its lock files name it."""
    ini = "bootstrap.ini" if os.name == "nt" else "bootstraprc"
    return _expand(ctx, f"${{$BRAND_INI_DIR/{ini}::UserInstallation}}")


def _log_path(ctx) -> str:
    folder = uno.fileUrlToSystemPath(office_profile(ctx).rstrip("/") + "/user")
    return os.path.join(folder, LOG_NAME)


def _window(doc):
    """The window to put a dialog over: the document's, else the one in front."""
    try:
        if doc is not None:
            return doc.getCurrentController().getFrame().getContainerWindow()
        return XSCRIPTCONTEXT.getDesktop().getCurrentFrame().getContainerWindow()  # noqa: F821
    except Exception:
        return None


def tell(ctx, doc, text: str, kind: str = "error") -> str:
    """Show ``text`` in a message box over the document, and keep it as ``LastReport``."""
    _remember(ctx, LastReport=text)
    parent = _window(doc)
    if parent is None:
        return text
    try:
        toolkit = ctx.ServiceManager.createInstanceWithContext("com.sun.star.awt.Toolkit", ctx)
        box_type = {"error": ERRORBOX, "warning": WARNINGBOX}.get(kind, INFOBOX)
        box = toolkit.createMessageBox(parent, box_type, BUTTONS_OK, "wzq: " + TITLE, text)
        box.execute()
        box.dispose()
    except Exception:
        pass  # the text is kept in LastReport
    return text


def ask_to_save(ctx, doc, name: str) -> tuple[bool, bool]:
    """Ask before saving: (save, always). Headless LibreOffice cancels every dialog."""
    smgr = ctx.ServiceManager
    model = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialogModel", ctx)
    model.Title = TITLE
    model.Width, model.Height = 240, 96

    def add(kind, key, x, y, w, h, **props):
        item = model.createInstance(f"com.sun.star.awt.UnoControl{kind}Model")
        item.PositionX, item.PositionY, item.Width, item.Height = x, y, w, h
        for k, v in props.items():
            setattr(item, k, v)
        model.insertByName(key, item)
        return item

    add(
        "FixedText",
        "question",
        8,
        8,
        224,
        42,
        MultiLine=True,
        Label=f"{name} has changes that are not saved yet. wzq reads the saved file, so the plan "
        "is saved first, in its own format. Save it now and recalculate?",
    )
    always = add("CheckBox", "always", 8, 54, 224, 12, Label="Always save without asking")
    add("Button", "save", 88, 74, 84, 14, Label="Save and recalculate", PushButtonType=1,
        DefaultButton=True)  # fmt: skip
    add("Button", "cancel", 176, 74, 56, 14, Label="Cancel", PushButtonType=2)
    dialog = smgr.createInstanceWithContext("com.sun.star.awt.UnoControlDialog", ctx)
    dialog.setModel(model)
    toolkit = smgr.createInstanceWithContext("com.sun.star.awt.Toolkit", ctx)
    parent = _window(doc)
    dialog.createPeer(toolkit, parent)
    try:
        answer = dialog.execute()
        return answer == 1, answer == 1 and always.State == 1
    finally:
        dialog.dispose()


# --- the user's Python -------------------------------------------------------------------------


def _child_env(ctx) -> dict:
    """The environment for the user's Python, without LibreOffice's own Python settings."""
    env = dict(os.environ)
    env.pop("PYTHONHOME", None)
    try:
        base = os.path.normcase(
            os.path.realpath(uno.fileUrlToSystemPath(_expand(ctx, "$BRAND_BASE_DIR")))
        )
    except Exception:
        base = None
    if base and env.get("PYTHONPATH"):
        keep = [
            p
            for p in env["PYTHONPATH"].split(os.pathsep)
            if p and not os.path.normcase(os.path.realpath(p)).startswith(base)
        ]
        if keep:
            env["PYTHONPATH"] = os.pathsep.join(keep)
        else:
            env.pop("PYTHONPATH")
    return env


def _hidden() -> dict:
    if os.name == "nt":  # no console window flashing up
        return {"creationflags": getattr(subprocess, "CREATE_NO_WINDOW", 0)}
    return {}


def _has_wzq(python: str, env: dict) -> bool:
    try:
        done = subprocess.run(
            [python, "-c", "import wzq.cli.calc_runner"],
            env=env,
            capture_output=True,
            timeout=120,
            **_hidden(),
        )
    except (OSError, subprocess.SubprocessError):
        return False
    return done.returncode == 0


def find_python(ctx, env: dict) -> tuple[str | None, str]:
    """The user's Python: the one remembered, else the first on the PATH with wzq.

    Returns (path, "") or (None, what to tell the user).
    """
    remembered = _setting(ctx, "Python", "") or ""
    if remembered and os.path.isfile(remembered):
        return remembered, ""
    names = ("python3", "python", "py") if os.name == "nt" else ("python3", "python")
    seen = []
    for name in names:
        found = shutil.which(name, path=env.get("PATH"))
        if found and found not in seen:
            seen.append(found)
            if _has_wzq(found, env):
                _remember(ctx, Python=found)
                return found, ""
    gone = f"The Python remembered for this command is gone: {remembered}\n\n" if remembered else ""
    tried = ", ".join(seen) if seen else "no python3 or python on the PATH"
    return None, (
        gone
        + f"No Python with wzq was found (tried: {tried}).\n\nInstall wzq (pip install wzq) and "
        "run, in that Python: wzq calc install"
    )


def run_wzq(ctx, python: str, env: dict, path: str) -> tuple[dict | None, str]:
    """Run the file backend on ``path``: (outcome, "") or (None, what went wrong)."""
    timeout = int(_setting(ctx, "TimeoutSeconds", 600) or 600)
    command = [
        python,
        "-m",
        "wzq.cli.calc_runner",
        "--office-profile",
        office_profile(ctx),
        "--log",
        _log_path(ctx),
        path,
    ]
    try:
        done = subprocess.run(command, env=env, capture_output=True, timeout=timeout, **_hidden())
    except subprocess.TimeoutExpired:
        return None, (
            f"wzq did not finish within {timeout} s and was stopped. The workbook is either as "
            "it was or completely recalculated (wzq saves in one step): File > Reload shows "
            "which. A longer limit can be set as TimeoutSeconds (Tools > Options > Advanced "
            "> Expert Configuration, search org.wzq)."
        )
    except OSError as e:
        return None, f"Could not start the Python at {python} ({e.strerror or e})."
    out = done.stdout.decode("utf-8", "replace")
    err = done.stderr.decode("utf-8", "replace")
    outcome = parse_outcome(out)
    if outcome is not None and outcome.get("protocol") == PROTOCOL:
        return outcome, ""
    last = next((line for line in reversed(err.splitlines()) if line.strip()), "")
    missing = re.search(r"No module named '([\w.]+)'", err)
    if missing and missing.group(1).startswith("wzq.io.office"):
        return None, (
            f"The wzq installed in {python} is older than this command. Update it "
            f"({_quoted(python)} -m pip install -U wzq), then run: wzq calc install"
        )
    if missing:
        return None, missing_wzq_text(python, f"No module named '{missing.group(1)}'")
    if outcome is not None:
        return None, (
            f"This command and the wzq installed in {python} do not match. Run, in that Python: "
            "wzq calc install"
        )
    _log(ctx, f"wzq exited with status {done.returncode}\n{out}\n{err}")
    return None, (
        "wzq stopped without an answer (exit status {}): {}\n\nThe details are in {}.".format(
            done.returncode, last or "no message", _log_path(ctx)
        )
    )


def _log(ctx, text: str) -> None:
    try:
        with open(_log_path(ctx), "a", encoding="utf-8") as fh:
            fh.write("{}  {}\n".format(time.strftime("%Y-%m-%d %H:%M:%S"), text))
    except OSError:
        pass


# --- the document ------------------------------------------------------------------------------


def _is_spreadsheet(doc) -> bool:
    try:
        return bool(doc.supportsService("com.sun.star.sheet.SpreadsheetDocument"))
    except Exception:
        return False


def _the_plan(ctx, args):
    """The spreadsheet to recalculate: a document passed by a script, else the one in front."""
    for arg in args:
        if _is_spreadsheet(arg):
            return arg
    doc = XSCRIPTCONTEXT.getDocument()  # noqa: F821 (given by the script provider)
    return doc if _is_spreadsheet(doc) else None


def _reload(doc):
    """Load the document again from its file into its own window; returns the new document.

    (``.uno:Reload`` would do the same in a visible window, but closes a hidden
    document; loading into the same frame works for both.)
    """
    url = doc.getURL()
    args = {p.Name: p.Value for p in doc.getArgs()}
    keep = [_prop(k, args[k]) for k in ("FilterName", "Hidden") if k in args]
    frame = doc.getCurrentController().getFrame()
    return frame.loadComponentFromURL(url, "_self", 0, tuple(keep))


def recalculate(ctx, doc) -> str:
    """One press of the command on ``doc``; returns the text of the outcome."""
    if doc is None:
        return tell(ctx, None, "Open a plan workbook (.xlsx) in Calc first.", "info")
    if not doc.hasLocation():
        return tell(
            ctx,
            doc,
            "This plan has not been saved as a file yet. Save it as an Excel workbook "
            "(File > Save As, type Excel 2007-365 .xlsx), then choose Recalculate plan again.",
            "info",
        )
    path = uno.fileUrlToSystemPath(doc.getURL())
    name = os.path.basename(path)
    if os.path.splitext(path)[1].lower() not in SUFFIXES:
        return tell(
            ctx,
            doc,
            f"wzq reads Excel workbooks (.xlsx or .xlsm), and {name} is not one. Save a copy as "
            "Excel 2007-365 (.xlsx) with File > Save As, then recalculate that copy.",
            "info",
        )
    if doc.isReadonly():
        return tell(
            ctx,
            doc,
            f"{name} is open read-only (perhaps someone else has it open), so wzq cannot write "
            "the results into it.",
        )
    if doc.isModified():
        if not _setting(ctx, "SaveWithoutAsking", False):
            save, always = ask_to_save(ctx, doc, name)
            if not save:
                return tell(
                    ctx,
                    doc,
                    f"{name} was not recalculated: it has unsaved changes, and wzq reads the saved "
                    "file. Save it, or choose Recalculate plan again and answer Save.",
                    "info",
                )
            if always:
                _remember(ctx, SaveWithoutAsking=True)
        try:
            doc.store()
        except Exception as e:
            return tell(
                ctx,
                doc,
                "{} could not be saved, so it was not recalculated: {}".format(
                    name, getattr(e, "Message", "") or e
                ),
            )
    env = _child_env(ctx)
    python, why = find_python(ctx, env)
    if python is None:
        return tell(ctx, doc, why)
    indicator = None
    try:
        indicator = doc.getCurrentController().getFrame().createStatusIndicator()
        indicator.start(f"wzq: recalculating {name} ...", 0)
    except Exception:
        indicator = None
    try:
        outcome, why = run_wzq(ctx, python, env, path)
    finally:
        if indicator is not None:
            indicator.end()
    if outcome is None:
        return tell(ctx, doc, why)
    status = outcome.get("status")
    if status == "problems":
        return tell(ctx, doc, problems_text(name, outcome.get("problems", [])))
    if status != "done":
        return tell(
            ctx,
            doc,
            "wzq stopped with an unexpected error; the workbook was not changed.\n\n{}\n\n"
            "The details are in {}. The command line gives the same analysis: wzq run {}".format(
                outcome.get("error", ""), outcome.get("log", _log_path(ctx)), name
            ),
        )
    text = done_text(name, outcome)
    if outcome.get("copied"):
        desktop = XSCRIPTCONTEXT.getDesktop()  # noqa: F821
        copy_url = uno.systemPathToFileUrl(outcome["target"])
        hidden = any(p.Name == "Hidden" and p.Value for p in doc.getArgs())
        desktop.loadComponentFromURL(copy_url, "_blank", 0, (_prop("Hidden", hidden),))
        return tell(ctx, doc, text, "warning")
    _reload(doc)
    _remember(ctx, LastReport=text)
    return text


def recalculate_plan(*args):
    """The Recalculate plan command (menu entry and toolbar button)."""
    ctx = XSCRIPTCONTEXT.getComponentContext()  # noqa: F821
    doc = None
    try:
        doc = _the_plan(ctx, args)
        return recalculate(ctx, doc)
    except Exception as e:  # never a traceback in front of the user
        _log(ctx, "".join(traceback.format_exception(*sys.exc_info())))
        return tell(
            ctx,
            doc,
            f"Recalculate plan stopped with an unexpected error: {type(e).__name__}: {e}\n\n"
            f"The details are in {_log_path(ctx)}.",
        )


g_exportedScripts = (recalculate_plan,)
