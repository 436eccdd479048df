"""The design review of a `Result` as HTML or Markdown (`Result.to_html`,
`Result.to_markdown`, `picker report`)."""

from __future__ import annotations

import datetime


def report_text(result, *, fmt: str = "html", review=None, top: int = 5,
                made: str | None = None) -> str:
    """The review document of `result` (a picker.Result) written as 'html' or
    'markdown'; `review` (a picker.Review) adds the BOM's cost-down review;
    `made` the date shown (default: now, with the local UTC offset)."""
    from picker import __version__
    from picker.present import report
    from picker.present.bom_review import review_report

    if fmt not in ("html", "markdown"):
        raise ValueError(f"fmt: 'html' or 'markdown', not {fmt!r}")
    if made is None:
        made = datetime.datetime.now().astimezone().isoformat(timespec="seconds")
    cat = result.catalog
    identity = report.catalogue_identity(
        path=cat.path, source=cat.source, content_hash=cat.content_hash,
        part_count=cat.part_count, rows_read=cat.rows_read, left_out=cat.left_out,
        warnings=cat.warnings)
    doc = report.build(result._engine, result._doc, inputs=result.design.inputs,
                       catalogue=identity, made=made, version=__version__, top=top,
                       review=None if review is None else review_report(review._rv),
                       review_source=None if review is None else review.bom_path)
    if fmt == "html":
        from picker.present.report_html import write_html

        return write_html(doc)
    from picker.present.report_md import write_markdown

    return write_markdown(doc)
