"""Writing a time request's files: the tables (Markdown, CSV, LaTeX), the PDF and the PNGs.

Shared by ``gcplan proposal`` and ``gcplan demo``; the JSON is written by the caller
(with the commands' JSON writer).  The figures are drawn once for the PDF and the PNGs.
"""

from __future__ import annotations

from pathlib import Path

#: File names inside an output folder.
FOLDER_NAMES = {"pdf": "proposal.pdf", "markdown": "proposal.md", "csv": "proposal.csv", "latex": "proposal.tex"}


def write_proposal(proposal, paths: dict, folder: Path | None = None, *, pngs: bool = True) -> list[Path]:
    """Write the files of ``paths`` (keys ``pdf``, ``markdown``, ``csv``, ``latex``) and, with
    ``folder``, every file not given elsewhere into it, with a PNG per figure (unless not ``pngs``)."""
    from planner.reports.proposal_figures import figures, save_pngs, write_pdf
    from planner.reports.proposal_tables import proposal_csv, proposal_latex, proposal_markdown

    paths = dict(paths)
    if folder is not None:
        folder.mkdir(exist_ok=True)
        for key, name in FOLDER_NAMES.items():
            paths.setdefault(key, folder / name)
    written = []
    for key, make in (("markdown", proposal_markdown), ("csv", proposal_csv), ("latex", proposal_latex)):
        if key in paths:
            Path(paths[key]).write_text(make(proposal), encoding="utf-8")
            written.append(Path(paths[key]))
    figs = figures(proposal) if ("pdf" in paths or folder is not None) else None
    if "pdf" in paths:
        written.append(write_pdf(proposal, paths["pdf"], figs))
    if folder is not None and pngs:
        written += save_pngs(proposal, folder, figs)
    return written
