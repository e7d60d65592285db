"""Trade studies: grid sweeps and tolerance Monte Carlo over ``[[vary]]`` parameters,
statistics, the non-dominated set, sensitivities and the lightest package that meets
the targets, on local processes or a Dask cluster.

Modules: ``variants`` (parameters, designs, building a variant), ``evaluate`` (the one
narrow function that turns a batch of variants into metrics), ``execute`` (chunks on
local processes or Dask, progress, checkpoints), ``stats`` (percentiles, probabilities,
front, sensitivities), ``sweep`` and ``optimize`` (the two runs).
"""

__all__ = ["run_optimization", "run_sweep", "sweep_study"]


def __getattr__(name):
    """Load the runs on first use (they import pandas and scipy)."""
    if name in ("run_sweep", "sweep_study"):
        from . import sweep

        return getattr(sweep, name)
    if name == "run_optimization":
        from . import optimize

        return optimize.run_optimization
    raise AttributeError(f"module 'noisebudget.trade' has no attribute {name!r}")
