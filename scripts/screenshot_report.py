"""Look at a report in a real browser: headless Chromium takes a screenshot.

    python scripts/screenshot_report.py REPORT.html [OUT.png] [--height 2400]
    python scripts/screenshot_report.py --scenario data/scenarios/cylinder_fill_residual.toml OUT.png
    python scripts/screenshot_report.py REPORT.html OUT.png --width 1366 --pdf OUT.pdf

``--width 1366`` is a laptop screen; ``--pdf`` also prints the report to an
A4 PDF as the browser's "print to PDF" does, and (with ``pypdfium2``
installed) writes each page as ``OUT.pdf.page-N.png`` to look at.

With ``--scenario`` the scenario is run first and its report written to a
temporary folder.  Needs ``chromium`` (or ``chromium-browser`` /
``google-chrome``) on PATH; exits with code 3 and a message if none is found.
Open the PNG to check that the caution boxes and the plots show.
"""
from __future__ import annotations

import argparse
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

BROWSERS = ("chromium", "chromium-browser", "google-chrome")


def find_browser():
    for name in BROWSERS:
        path = shutil.which(name)
        if path:
            return path
    return None


def screenshot(html_path, png_path, width=1200, height=2400, timeout=120):
    """Render ``html_path`` headless and write ``png_path``; returns the PNG path."""
    browser = find_browser()
    if browser is None:
        raise FileNotFoundError("no chromium found on PATH (apt-get install chromium)")
    html_path = Path(html_path).resolve()
    png_path = Path(png_path).resolve()
    with tempfile.TemporaryDirectory() as profile:
        cmd = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={profile}", f"--screenshot={png_path}", f"--window-size={width},{height}",
               "--hide-scrollbars", html_path.as_uri()]
        subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, check=False)
    if not png_path.is_file():
        raise RuntimeError(f"the browser wrote no screenshot at {png_path}")
    return png_path


def print_pdf(html_path, pdf_path, timeout=120):
    """Print ``html_path`` to an A4 PDF with headless Chromium (its print-to-PDF); returns the path."""
    browser = find_browser()
    if browser is None:
        raise FileNotFoundError("no chromium found on PATH (apt-get install chromium)")
    html_path = Path(html_path).resolve()
    pdf_path = Path(pdf_path).resolve()
    with tempfile.TemporaryDirectory() as profile:
        cmd = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={profile}", f"--print-to-pdf={pdf_path}", "--no-pdf-header-footer",
               html_path.as_uri()]
        subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, check=False)
    if not pdf_path.is_file():
        raise RuntimeError(f"the browser wrote no PDF at {pdf_path}")
    return pdf_path


def pdf_pages(pdf_path, scale=1.0):
    """Each page of a PDF as a PNG beside it (needs pypdfium2); returns the paths ([] without it)."""
    try:
        import pypdfium2 as pdfium
    except ImportError:
        return []
    doc = pdfium.PdfDocument(str(pdf_path))
    out = []
    for i in range(len(doc)):
        page = doc[i]
        w, h = page.get_size()
        if i == 0:
            print(f"page size {w / 72 * 25.4:.0f} x {h / 72 * 25.4:.0f} mm, {len(doc)} pages")
        img = page.render(scale=scale).to_pil()
        p = Path(f"{pdf_path}.page-{i + 1}.png")
        img.save(p)
        out.append(p)
    return out


def main(argv=None):
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("report", nargs="?", help="report HTML file")
    p.add_argument("out", nargs="?", default="report.png", help="PNG to write (default report.png)")
    p.add_argument("--scenario", help="run this scenario first and shoot its report")
    p.add_argument("--width", type=int, default=1200)
    p.add_argument("--height", type=int, default=2400)
    p.add_argument("--pdf", help="also print the report to this A4 PDF (and its pages as PNG)")
    args = p.parse_args(argv)
    if find_browser() is None:
        print("screenshot_report: no chromium found on PATH (apt-get install chromium)", file=sys.stderr)
        return 3
    tmp = None
    report = args.report
    if args.scenario:
        if args.report and not args.out:
            args.out = args.report
        elif args.report:
            args.out = args.report
        tmp = tempfile.mkdtemp()
        report = str(Path(tmp) / "report.html")
        r = subprocess.run([sys.executable, "-m", "eosfill", "run", args.scenario, "--report", report],
                           capture_output=True, text=True)
        if r.returncode != 0:
            print(r.stderr, file=sys.stderr)
            return r.returncode
    if not report:
        p.error("give a report HTML file or --scenario")
    out = screenshot(report, args.out, args.width, args.height)
    print(out)
    if args.pdf:
        pdf = print_pdf(report, args.pdf)
        print(pdf)
        for page in pdf_pages(pdf):
            print(page)
    return 0


if __name__ == "__main__":
    sys.exit(main())
