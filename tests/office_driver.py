"""A UNO client for the LibreOffice tests, run by a Python that has ``uno``.

Debian's ``python3-uno`` is built for the system Python (``/usr/bin/python3``),
which need not be the Python that runs the tests, so the tests start this file
with a Python that can ``import uno`` and talk to it through JSON lines: one
request per line on standard input (``{"op": NAME, ...}``), one answer per line
on standard output (``{"ok": VALUE}`` or ``{"error": TEXT}``). It only uses the
standard library and ``uno``; it never imports wzq.

It drives a LibreOffice that the test started (headless, UNO socket on the
loopback address) as a user would: open a workbook, type into a cell without
saving, press the Recalculate plan command through the script provider or by
dispatching the menu's address in the document's window, read the sheets, the
charts and the command's settings back.
"""

from __future__ import annotations

import contextlib
import json
import sys
import time
import traceback

import uno
from com.sun.star.beans import PropertyValue

SETTINGS = "/org.wzq.calc.Settings/Recalculate"
ADDONS = "/org.openoffice.Office.Addons/AddonUI"


def prop(name, value):
    p = PropertyValue()
    p.Name = name
    p.Value = value
    return p


class Driver:
    def __init__(self) -> None:
        self.ctx = None
        self.url = None

    # --- connection ---------------------------------------------------------------------

    def op_connect(self, port: int, timeout: float):
        local = uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext(
            "com.sun.star.bridge.UnoUrlResolver", local
        )
        deadline = time.monotonic() + timeout
        while True:
            try:
                self.ctx = resolver.resolve(
                    f"uno:socket,host=127.0.0.1,port={port};urp;StarOffice.ComponentContext"
                )
                return True
            except Exception:
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.1)

    def _service(self, name):
        return self.ctx.ServiceManager.createInstanceWithContext(name, self.ctx)

    @property
    def desktop(self):
        return self._service("com.sun.star.frame.Desktop")

    # --- the document -------------------------------------------------------------------

    def doc(self):
        """The open plan (found by its address: a reload makes a new document object)."""
        components = self.desktop.getComponents().createEnumeration()
        while components.hasMoreElements():
            c = components.nextElement()
            if hasattr(c, "getURL") and c.getURL() == self.url:
                return c
        raise RuntimeError(f"the document {self.url} is not open")

    def _front(self):
        """Put the plan's window in front (as clicking into it does)."""
        frame = self.doc().getCurrentController().getFrame()
        frame.activate()
        return frame

    def op_open(self, path: str):
        self.url = uno.systemPathToFileUrl(path)
        self.desktop.loadComponentFromURL(self.url, "_blank", 0, (prop("Hidden", True),))
        self._front()
        return list(self.doc().Sheets.ElementNames)

    def op_documents(self):
        found = []
        components = self.desktop.getComponents().createEnumeration()
        while components.hasMoreElements():
            c = components.nextElement()
            if hasattr(c, "getURL"):
                found.append(c.getURL())
        return found

    def op_sheets(self):
        return list(self.doc().Sheets.ElementNames)

    def op_modified(self):
        return bool(self.doc().isModified())

    def op_set_cell(self, sheet: str, cell: str, value):
        c = self.doc().Sheets.getByName(sheet).getCellRangeByName(cell)
        if isinstance(value, str):
            c.setString(value)
        else:
            c.setValue(value)
        return True

    def op_read(self, sheet: str):
        """Every used cell of a sheet from A1, row by row: [value, formula] (a number as a
        float, text as text, an empty cell as ""; the formula as typed, or the content)."""
        s = self.doc().Sheets.getByName(sheet)
        cursor = s.createCursor()
        cursor.gotoEndOfUsedArea(False)
        end = cursor.getRangeAddress()
        block = s.getCellRangeByPosition(0, 0, end.EndColumn, end.EndRow)
        return [
            [[v, f] for v, f in zip(dr, fr, strict=True)]
            for dr, fr in zip(block.getDataArray(), block.getFormulaArray(), strict=True)
        ]

    def op_charts(self, sheet: str):
        """The charts on a sheet: name, title and how many data series."""
        s = self.doc().Sheets.getByName(sheet)
        out = []
        charts = s.getCharts()
        for i in range(charts.getCount()):
            chart = charts.getByIndex(i).getEmbeddedObject()
            title = chart.getTitle().String if chart.HasMainTitle else ""
            series = 0
            for coords in chart.getFirstDiagram().getCoordinateSystems():
                for kind in coords.getChartTypes():
                    series += len(kind.getDataSeries())
            out.append({"title": title, "series": series})
        return out

    # --- the command --------------------------------------------------------------------

    def op_press_script(self, url: str):
        """Press through the script provider (as a macro or a script would)."""
        self._front()
        factory = self._service("com.sun.star.script.provider.MasterScriptProviderFactory")
        script = factory.createScriptProvider("").getScript(url)
        result = script.invoke((), (), ())
        return result[0]

    def op_press_menu(self, url: str):
        """Press as the menu entry or toolbar button does: dispatch its address in the window."""
        frame = self._front()
        helper = self._service("com.sun.star.frame.DispatchHelper")
        event = helper.executeDispatch(frame, url, "", 0, ())
        return event.Result if event is not None else None

    def _settings(self, path: str, update: bool = False):
        provider = self._service("com.sun.star.configuration.ConfigurationProvider")
        service = "com.sun.star.configuration.Configuration%sAccess" % ("Update" if update else "")
        return provider.createInstanceWithArguments(service, (prop("nodepath", path),))

    def op_setting(self, name: str):
        return self._settings(SETTINGS).getByName(name)

    def op_set_setting(self, name: str, value):
        node = self._settings(SETTINGS, update=True)
        node.replaceByName(name, value)
        node.commitChanges()
        return True

    def op_addons(self):
        """The command addresses of the extension's menu entries and toolbar buttons."""
        menu = self._settings(f"{ADDONS}/OfficeMenuBar/org.wzq.calc.menu")
        items = menu.getByName("Submenu")
        menus = [
            {"title": items.getByName(n).Title, "url": items.getByName(n).URL}
            for n in items.ElementNames
        ]
        bar = self._settings(f"{ADDONS}/OfficeToolbarMerging/org.wzq.calc.toolbar")
        buttons = []
        for n in bar.ElementNames:
            merge = bar.getByName(n)
            tool_items = merge.getByName("ToolBarItems")
            for b in tool_items.ElementNames:
                item = tool_items.getByName(b)
                buttons.append(
                    {"title": item.Title, "url": item.URL, "toolbar": merge.MergeToolBar}
                )
        images = self._settings(f"{ADDONS}/Images/org.wzq.calc.image")
        icon = images.getByName("UserDefinedImages").ImageSmallURL
        return {"menu": menus, "toolbar": buttons, "icon": icon, "icon_for": images.URL}

    def op_store(self):
        self.doc().store()
        return True

    def op_add_shape(self, sheet: str):
        """Draw a rectangle on a sheet (a drawn shape, which wzq cannot keep when it saves)."""
        from com.sun.star.awt import Point, Size

        doc = self.doc()
        shape = doc.createInstance("com.sun.star.drawing.RectangleShape")
        doc.Sheets.getByName(sheet).getDrawPage().add(shape)
        shape.setPosition(Point(1000, 1000))
        shape.setSize(Size(3000, 1500))
        doc.setModified(True)  # as drawing it in the window does (the API call does not)
        return True

    def op_export_pdf(self, sheet: str, path: str):
        """One sheet of the open document as a PDF (its print ranges and page setup)."""
        doc = self.doc()
        data = uno.Any(
            "[]com.sun.star.beans.PropertyValue",
            (prop("Selection", doc.Sheets.getByName(sheet)),),
        )
        args = (prop("FilterName", "calc_pdf_Export"), prop("FilterData", data))
        uno.invoke(doc, "storeToURL", (uno.systemPathToFileUrl(path), args))
        return path

    def op_close(self):
        with contextlib.suppress(Exception):
            self.doc().close(True)
        return True

    def op_quit(self):
        with contextlib.suppress(Exception):  # the office goes away while answering
            self.desktop.terminate()
        return True


def main() -> None:
    driver = Driver()
    for line in sys.stdin:
        if not line.strip():
            continue
        request = json.loads(line)
        op = request.pop("op")
        try:
            answer = {"ok": getattr(driver, f"op_{op}")(**request)}
        except Exception as e:
            answer = {"error": f"{type(e).__name__}: {getattr(e, 'Message', '') or e}"}
            answer["trace"] = traceback.format_exc()
        sys.stdout.write(json.dumps(answer, default=str) + "\n")
        sys.stdout.flush()
        if op == "quit":
            break


if __name__ == "__main__":
    main()
