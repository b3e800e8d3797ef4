"""report.pdf: the report page (report.html) laid out for print, as PDF bytes.

The PDF is made from the very text of report.html by WeasyPrint, which applies the page's print
stylesheet (``shared.css``: A4 pages, the running header with the title and reference, "page n
of N" at the foot, tables and figures never split). Nothing is fetched: the page carries its
figures as data: URLs, and every other URL (http, https, file) is refused, so a report renders
the same offline and cannot reach the network. WeasyPrint needs the system's Pango library; it
is imported only when a PDF is made (its import alone costs about a second), and
:func:`pdf_unavailable` says in words what is missing when it cannot be. Writing the file is
the output layer's (:mod:`siting.output.screen`).
"""

from __future__ import annotations

__all__ = ["pdf_unavailable", "report_pdf"]

#: The only URL scheme the PDF renderer may open: the figures inlined in the page.
_ALLOWED_SCHEMES = ("data",)

#: Why report.pdf cannot be made, by the kind of failure of ``import weasyprint``.
_MISSING_PANGO = (
    "WeasyPrint needs the Pango library (Debian: apt install libpango-1.0-0 libpangoft2-1.0-0)"
)
_MISSING_WEASYPRINT = "WeasyPrint is not installed (pip install weasyprint)"


def pdf_unavailable() -> str | None:
    """Why a PDF cannot be made here, in words, or None when it can.

    Returns
    -------
    str or None
        What is missing: the Pango system library (``import weasyprint`` raises OSError) or
        WeasyPrint itself (ImportError).
    """
    try:
        import weasyprint  # noqa: F401  (imported to see whether it loads)
    except OSError:
        return _MISSING_PANGO
    except ImportError:
        return _MISSING_WEASYPRINT
    return None


def _refusing_fetcher(weasyprint):
    """A URL fetcher that opens data: URLs only (any other URL raises ValueError, which
    WeasyPrint reports in its log and renders without)."""
    urls = weasyprint.urls
    if hasattr(urls, "URLFetcher"):  # WeasyPrint >= 68: a fetcher object
        return urls.URLFetcher(allowed_protocols=_ALLOWED_SCHEMES)

    def fetch(url, *args, **kwargs):  # earlier releases: a function
        if str(url).split(":", 1)[0].lower() not in _ALLOWED_SCHEMES:
            raise ValueError(f"report.pdf: refused to fetch {url}")
        return urls.default_url_fetcher(url, *args, **kwargs)

    return fetch


def report_pdf(page: str) -> bytes:
    """PDF bytes of a report page, laid out by its print stylesheet.

    Parameters
    ----------
    page : str
        The whole page (report.html's text); figures inlined as data: URLs.

    Returns
    -------
    bytes
        The PDF file's contents.

    Raises
    ------
    OSError, ImportError
        WeasyPrint cannot be imported (see :func:`pdf_unavailable`).
    """
    import weasyprint

    document = weasyprint.HTML(
        string=page, url_fetcher=_refusing_fetcher(weasyprint), media_type="print"
    )
    return document.write_pdf()
