"""Reports: design-review PDF and workbook. Imports matplotlib and weasyprint lazily."""

from __future__ import annotations

from pathlib import Path

__all__ = ["CAUTIONS", "report_targets", "write_reports"]

CAUTIONS = (
    "Every number in this report is an engineering estimate from idealised models "
    "(laterally infinite flat layers; no frames, stringers or curvature; leaks by idealised "
    "aperture models; flanking and structure-borne noise only as the study states them).",
    "Certified laboratory and flight testing decide: ASTM E90 / ISO 10140 for transmission "
    "loss, ASTM E2611 for impedance-tube samples, and in-flight surveys for cabin levels.",
    "Airworthiness requirements, cabin-material flammability rules (e.g. 14 CFR 25.853 and "
    "25.856) and occupational noise-exposure rules, and local codes, govern any design.",
    "Licensed practice decides; this report supports, and does not replace, engineering "
    "judgement and certification.",
)


def report_targets(stem: str) -> list[str]:
    """File names the reports will have."""
    return [f"{stem}.pdf", f"{stem}.xlsx"]


def write_reports(result, study_path: Path, outdir: Path, stem: str) -> list[Path]:
    """Write ``<stem>.pdf`` and ``<stem>.xlsx`` atomically; returns their paths."""
    from .pdf import write_pdf
    from .workbook import write_workbook

    pdf = outdir / f"{stem}.pdf"
    xlsx = outdir / f"{stem}.xlsx"
    write_workbook(result, xlsx)
    write_pdf(result, study_path, pdf)
    return [pdf, xlsx]
