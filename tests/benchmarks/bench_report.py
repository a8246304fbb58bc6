"""Benchmark: the PDF submittal at scale, as figures and ratios (never a timed assertion).

Run on demand:  python -m pytest tests/benchmarks/bench_report.py -q -s

For each demo installation (the school, the office, the campus when it is there) it times
``assess`` and ``evaluate_lineup``, then typesets the PDF in a child process (so its peak
memory is the child's own: the process that writes the report, holding the assessment) and
prints, for the PDF: wall time, its ratio to ``assess`` of the same file in the same run,
pages, seconds per page, figures drawn against circuits and panels (figures are drawn once
per distinct content, never per circuit), and peak RSS. It also times the data exports
(JSON, CSV) as a reference measured in the same run. Machine load (``os.getloadavg``) is
printed beside the figures, since the machine is shared. Issue targets for the campus: the
PDF within 15 s of ``assess``, peak memory within 400 MB.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import resource
import time
from pathlib import Path

import pytest

from pqcalc.errors import ConvergenceError, InputError
from pqcalc.installation import assess, evaluate_lineup, export, load_installation

DEMO = Path(__file__).resolve().parents[2] / "demo_installations"
DEMOS = ["harbour_school.toml", "cedar_row_offices.toml", "linden_reach_college.toml"]


def _t(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def _status_mb(key: str) -> float:
    """A memory figure of this process from /proc/self/status [MB] (Linux; NaN elsewhere)."""
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith(key + ":"):
                return float(line.split()[1]) / 1024.0
    except OSError:
        pass
    return float("nan")


def _pdf_child(a, lineup, q) -> None:
    """Typeset the PDF; put (seconds, bytes, pages, figures drawn, peak RSS [MB], RSS the
    child started with [MB]: the assessment it inherits)."""
    import io

    import pypdf

    from pqcalc import __version__
    from pqcalc.report import report_paper
    from pqcalc.reporting.pdf import FigureBook, build_pdf
    from pqcalc.reporting.story import build_story

    rss0 = _status_mb("VmRSS")
    t0 = time.perf_counter()
    figs = FigureBook()
    story = build_story(a, lineup, [], __version__, "bench", figs)
    w, h = report_paper(a).size_in
    data = build_pdf(story, (72 * w, 72 * h), footer_left="bench", footer_caution=a.caution,
                     header="bench", meta={})
    dt = time.perf_counter() - t0
    pages = len(pypdf.PdfReader(io.BytesIO(data)).pages)
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kB on Linux
    q.put((dt, len(data), pages, figs.drawn, rss, rss0))


def _bench(name: str, path: Path, out: Path) -> None:
    inst = load_installation(path)
    try:
        t_assess, a = _t(lambda: assess(inst))
        t_lineup, lu = _t(lambda: evaluate_lineup(inst))
    except (ConvergenceError, InputError) as e:
        print(f"\n{name}: could not be assessed in this checkout ({type(e).__name__}: {e})")
        return
    load0 = os.getloadavg()[0]
    ctx = mp.get_context("fork")
    q = ctx.Queue()
    p = ctx.Process(target=_pdf_child, args=(a, lu, q))
    p.start()
    dt, size, pages, drawn, rss, rss0 = q.get()
    p.join()
    t_json, _ = _t(lambda: export.to_json(a, lu))
    t_csv, _ = _t(lambda: export.to_csv(a, out / f"{name}-tables"))
    print(f"\n{name}: {len(inst.circuits)} circuits on {len(inst.panels)} panels, "
          f"{inst.n_scenarios} scenarios, {len(lu)} lineup entries; load average "
          f"{load0:.1f} (2 cores)")
    print(f"  assess  {t_assess:7.2f} s   lineup {t_lineup:6.2f} s")
    print(f"  pdf     {dt:7.2f} s   ratio to assess {dt / t_assess:5.2f}; {pages} pages, "
          f"{dt / pages:.2f} s a page; {size / 1e3:.0f} kB")
    print(f"          peak RSS {rss:.0f} MB, of which {rss0:.0f} MB the assessment held "
          f"before the report began: the report added {rss - rss0:.0f} MB")
    print(f"          figures drawn {drawn} for {len(inst.circuits)} circuits and "
          f"{len(inst.panels)} panels")
    print(f"  json    {t_json:7.2f} s   csv {t_csv:6.2f} s (references, same run)")


@pytest.mark.parametrize("demo", DEMOS)
def test_demo_report(demo, tmp_path):
    path = DEMO / demo
    if not path.exists():
        pytest.skip(f"{demo} is not in this checkout")
    _bench(demo.removesuffix(".toml"), path, tmp_path)
