"""Reports: design-review PDF and workbook. Imports matplotlib and weasyprint lazily."""

from __future__ import annotations

from pathlib import Path

__all__ = ["CAUTIONS", "REPORT_KINDS", "report_targets", "write_reports"]

CAUTIONS = (
    "Every figure in this report is an engineering estimate from idealised models: "
    "laterally infinite layers (curvature, smeared stiffeners and a finite-bay radiation "
    "correction only where the study gives them); leaks by idealised aperture models; "
    "flanking and structure-borne noise only as the study states them.",
    "Transmission-loss tests of representative panels and ground and flight surveys of the "
    "cabin decide the values a programme flies with.",
    "Certification under the applicable airworthiness requirements (such as 14 CFR Part 25 "
    "or CS-25) governs, as do the cabin-material flammability rules (such as 14 CFR 25.853 "
    "and 25.856) and the noise-exposure rules that apply to crew and passengers.",
    "Licensed engineering practice decides; this report supports that judgement and does "
    "not replace it.",
)


REPORT_KINDS = ("pdf", "xlsx")


def report_targets(stem: str, kinds=REPORT_KINDS) -> list[str]:
    """File names the reports of the given kinds will have."""
    return [f"{stem}.{k}" for k in REPORT_KINDS if k in kinds]


def write_reports(result, study_path: Path, outdir: Path, stem: str,
                  kinds=REPORT_KINDS) -> list[Path]:
    """Write ``<stem>.pdf`` and/or ``<stem>.xlsx`` atomically into ``outdir``; returns
    their paths. The command line writes them into a staging folder (see
    :func:`noisebudget.writing.staged_set`) so that the whole set appears at once."""
    written = []
    if "xlsx" in kinds:
        from .workbook import write_workbook

        written.append(outdir / f"{stem}.xlsx")
        write_workbook(result, written[-1])
    if "pdf" in kinds:
        from .pdf import write_pdf

        written.append(outdir / f"{stem}.pdf")
        write_pdf(result, study_path, written[-1])
    return written
