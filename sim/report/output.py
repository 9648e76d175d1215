"""Write a report folder atomically: complete, or absent.

Every file is written into a temporary sibling folder (``.NAME.tmp-XXXX`` next
to the target), which is then renamed into place. A folder already at the
target is replaced only when it is a report railfault wrote (it holds the
marker file :data:`MARKER`) or is empty; anything else is refused, so that
``-o`` can never delete a folder of the user's. If anything fails, the
temporary folder is removed and the target is left as it was. A folder that
cannot be used raises :class:`sim.errors.OutputError` (exit 2, nothing written).
"""
from __future__ import annotations

import json
import os
import shutil
import tempfile

from sim.errors import OutputError
from sim.report.page import render_html, render_markdown

__all__ = ["MARKER", "OutputError", "check_target", "files_of", "write"]

#: Marker file of a report folder (its content: the tool and version).
MARKER = ".railfault-report"


def _is_replaceable(path: str) -> bool:
    if not os.path.isdir(path):
        return False
    entries = os.listdir(path)
    return not entries or MARKER in entries


def check_target(out_dir: str) -> str:
    """The absolute target folder, or :class:`OutputError` saying why it cannot be used."""
    out = os.path.abspath(out_dir)
    if os.path.exists(out) and not os.path.isdir(out):
        raise OutputError(f"{out_dir}: exists and is not a folder; give a folder for the report")
    if os.path.isdir(out) and not _is_replaceable(out):
        raise OutputError(f"{out_dir}: the folder exists and is not a railfault report (no "
                          f"{MARKER} in it); give a new or empty folder")
    parent = os.path.dirname(out)
    if os.path.exists(parent) and not os.path.isdir(parent):
        raise OutputError(f"{out_dir}: {parent} is not a folder")
    return out


def files_of(rep) -> dict:
    """Every file of the report folder: ``{name: str or bytes}``."""
    files: dict = {
        "index.html": render_html(rep),
        "report.md": render_markdown(rep),
        "result.json": json.dumps(rep.result.as_dict(), indent=2) + "\n",
        "check.json": json.dumps(rep.check, indent=2) + "\n",
        MARKER: f"railfault {rep.version}\n",
    }
    if rep.sweep is not None:
        files["sweep.json"] = json.dumps(rep.sweep.summary, indent=2) + "\n"
    for t in rep.tables:
        files.setdefault(t.filename, t.csv_text())
    for f in rep.figures:
        if f.png:
            files[f.png_name] = f.png
    return files


def write(rep, out_dir: str) -> list[str]:
    """Write the report's folder at ``out_dir`` (atomically); the names written."""
    out = check_target(out_dir)
    parent = os.path.dirname(out)
    try:
        os.makedirs(parent, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{out_dir}: cannot make the folder ({exc.strerror})") from None
    files = files_of(rep)
    try:
        tmp = tempfile.mkdtemp(prefix=f".{os.path.basename(out)}.tmp-", dir=parent)
    except OSError as exc:
        raise OutputError(f"{out_dir}: cannot write there ({exc.strerror})") from None
    old = None
    try:
        for name, content in sorted(files.items()):
            mode = "wb" if isinstance(content, bytes) else "w"
            with open(os.path.join(tmp, name), mode, **({} if mode == "wb"
                                                        else {"encoding": "utf-8"})) as fh:
                fh.write(content)
        os.chmod(tmp, 0o755)
        if os.path.isdir(out):
            old = tempfile.mkdtemp(prefix=f".{os.path.basename(out)}.old-", dir=parent)
            os.rename(out, os.path.join(old, "report"))
        os.rename(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        if old is not None and not os.path.exists(out):
            os.rename(os.path.join(old, "report"), out)
        raise
    finally:
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
    return sorted(files)
