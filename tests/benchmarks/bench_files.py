"""Benchmark: the file boundary. Package import, first catalog load (every entry checked
against its schema), loading the example stack and the demo study (warm), and validating
a study that holds many mistakes.

Run by hand (`make bench`); prints milliseconds. Targets: import under 0.3 s, a stack
file under 2 ms and the demo study under 20 ms once the unit registry is up.
"""

import re
import subprocess
import sys
import time

from bench_stack import best_ms  # the script's folder is on the path

import noisebudget as nb
from noisebudget.resources import data_path


def main():
    code = "import time; t = time.perf_counter(); import noisebudget; " \
           "print(time.perf_counter() - t)"
    imports = [float(subprocess.run([sys.executable, "-c", code], capture_output=True,
                                    text=True, check=True).stdout) for _ in range(5)]
    print(f"import noisebudget: {min(imports) * 1e3:.0f} ms (best of 5)")
    from noisebudget.catalog import _load, load_catalog
    from noisebudget.units import registry

    t0 = time.perf_counter()
    registry()
    print(f"unit registry, first use: {(time.perf_counter() - t0) * 1e3:.0f} ms")
    _load.cache_clear()
    t0 = time.perf_counter()
    cat = load_catalog()
    print(f"catalogs, first load ({len(cat.keys())} entries checked): "
          f"{(time.perf_counter() - t0) * 1e3:.1f} ms")
    stack = data_path("examples", "sidewall.toml")
    study = data_path("examples", "demo-study.toml")
    nb.load_study(study)  # pandas and the budget module on first use
    print(f"load_stack(sidewall.toml): {best_ms(lambda: nb.load_stack(stack), 50):.2f} ms")
    print(f"load_study(demo-study.toml): {best_ms(lambda: nb.load_study(study), 20):.2f} ms")
    text = re.sub(r"level_db = (\d+)", r'level_db = "\1 dB"', study.read_text())
    text = text.replace(' m^2"', ' m"').replace('kg/m^2"', 'kg"').replace('"0.70 s"', "0.70")
    bad = data_path("examples").parent.parent.parent / ".cache" / "bench-bad-study.toml"
    bad.parent.mkdir(exist_ok=True)
    bad.write_text(text)

    def refuse():
        try:
            nb.load_study(bad)
        except nb.InputError as exc:
            return len(exc.lines())
        return 0

    n = refuse()
    print(f"validating a study with {n} mistakes: {best_ms(refuse, 20):.2f} ms")


if __name__ == "__main__":
    main()
