"""Benchmark: start-up of the command line (`--help`, `--version`, `import noisebudget`)
in fresh processes, best of 7; and the reports of the demo study (figures, PDF layout,
workbook) after the study is computed.
"""

import subprocess
import sys
import tempfile
import time
from pathlib import Path


def best_of(args, n=7):
    times = []
    for _ in range(n):
        t0 = time.perf_counter()
        subprocess.run(args, check=True, capture_output=True)
        times.append(time.perf_counter() - t0)
    return min(times)


def main():
    py = sys.executable
    print(f"python -c pass:             {best_of([py, '-c', 'pass']):.3f} s")
    print(f"python -c 'import noisebudget': {best_of([py, '-c', 'import noisebudget']):.3f} s")
    print(f"noisebudget --help:         {best_of([py, '-m', 'noisebudget', '--help']):.3f} s")
    print(f"noisebudget --version:      {best_of([py, '-m', 'noisebudget', '--version']):.3f} s")
    print(f"noisebudget run --help:     "
          f"{best_of([py, '-m', 'noisebudget', 'run', '--help']):.3f} s")

    import noisebudget as nb
    from noisebudget.report.pdf import render_html, write_pdf
    from noisebudget.report.workbook import write_workbook
    from noisebudget.resources import data_path

    study = data_path("examples", "demo-study.toml")
    result = nb.run_study(study)
    with tempfile.TemporaryDirectory() as out:
        t0 = time.perf_counter()
        render_html(result, study)
        t1 = time.perf_counter()
        write_pdf(result, study, Path(out) / "r.pdf")
        t2 = time.perf_counter()
        write_workbook(result, Path(out) / "r.xlsx")
        t3 = time.perf_counter()
    print(f"demo report: figures and HTML {t1 - t0:.2f} s, whole PDF {t2 - t1:.2f} s, "
          f"workbook {t3 - t2:.2f} s")


if __name__ == "__main__":
    main()
