"""Resuming a batch: which campaigns are built already (a complete output of the same input,
options and ttsp version) and are reported from their ``summary.json`` instead of rebuilt.

Layer 5 (a shell).
"""

from __future__ import annotations

import json
import time
from dataclasses import dataclass
from pathlib import Path

from .. import __version__
from ..io.readers import hash_inputs
from ..io.writers import NUMBER_FILES
from ..workflow import BuildOptions
from .rows import error_text, failed_row, row_from_summary
from .worker import payload_for

__all__ = ["Plan", "plan_campaigns", "reusable_summary"]


def _jsonable(value):
    return json.loads(json.dumps(value))


def reusable_summary(item, folder: Path, sha: str, figures: bool):
    """The summary of a complete earlier build of the same input and options, else None.

    Parameters
    ----------
    item : ttsp.batch.manifest.BatchItem
    folder : pathlib.Path
        The campaign's output folder.
    sha : str
        SHA-256 of the campaign's inputs now (:func:`ttsp.io.readers.hash_inputs`).
    figures : bool
        Whether this run asks for figures (then ``report.html`` must be there too).
    """
    try:
        summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(summary, dict) or (
            summary.get("input_sha256") != sha
            # options a build of an earlier version did not record have their defaults
            or not isinstance(summary.get("options"), dict)
            or {**_jsonable(BuildOptions().to_dict()), **summary["options"]}
            != _jsonable(item.options.to_dict())
            or summary.get("tool_version") != __version__
            or item.modulus_kind not in (None, summary.get("modulus_kind"))):
        return None
    wanted = NUMBER_FILES + (("report.html",) if figures else ())
    if not all((folder / name).is_file() for name in wanted):
        return None
    return summary


@dataclass
class Plan:
    """What a run of a batch does: the payloads to build, and the rows known before any build
    (campaigns reused from an earlier run, and campaigns whose inputs cannot be read)."""

    pending: list
    finished: list

    @property
    def unreadable(self) -> int:
        return sum(row["status"] != "ok" for row in self.finished)

    @property
    def reused(self) -> int:
        return len(self.finished) - self.unreadable


def plan_campaigns(items, out: Path, *, figures: bool, force: bool) -> Plan:
    """Hash every campaign's inputs and sort the campaigns into to build and known already."""
    plan = Plan([], [])
    for item in items:
        folder = out / item.id
        t0 = time.perf_counter()
        payload = payload_for(item, folder, figures=figures, force=force)
        try:
            payload["input_sha256"] = sha = hash_inputs(item.paths)
        except Exception as exc:  # a missing or unreadable input: this campaign fails
            plan.finished.append(failed_row(payload, error_text(exc), time.perf_counter() - t0))
            continue
        summary = None if force else reusable_summary(item, folder, sha, figures)
        if summary is not None:
            plan.finished.append(row_from_summary(payload, summary, skipped=True,
                                                  elapsed_s=time.perf_counter() - t0))
        else:
            plan.pending.append(payload)
    return plan
