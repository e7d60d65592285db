"""Shared fixtures: reference air states used by published check values."""

import pytest

from noisebudget.media import Air


class FixedAir(Air):
    """Air with density, speed of sound and viscosity fixed to a source's values."""

    def __init__(self, density, sound_speed, pressure=101325.0, viscosity=1.84e-5):
        super().__init__(293.15, pressure)
        object.__setattr__(self, "_rho", density)
        object.__setattr__(self, "_c", sound_speed)
        object.__setattr__(self, "_mu", viscosity)

    @property
    def density(self):
        return self._rho

    @property
    def sound_speed(self):
        return self._c

    @property
    def viscosity(self):
        return self._mu


@pytest.fixture
def air_1213():
    """rho0 1.213 kg/m^3, c0 342.2 m/s, P0 101325 Pa, eta 1.84e-5 Pa s (the air of the
    porous-material check values in Allard & Atalla's worked examples)."""
    return FixedAir(1.213, 342.2)


@pytest.fixture(scope="session")
def demo_study():
    """Path of the shipped demo study."""
    from noisebudget.resources import data_path

    return data_path("examples", "demo-study.toml")


@pytest.fixture(scope="session")
def demo_result(demo_study):
    """The demo study's result tables, computed once per test session."""
    import noisebudget as nb

    return nb.run_study(demo_study)


@pytest.fixture(scope="session")
def demo_out(tmp_path_factory):
    """A folder with the demo's CSV tables, PDF and workbook, written once per session
    through the command line."""
    from noisebudget.cli import main

    out = tmp_path_factory.mktemp("demo")
    assert main(["demo", "-o", str(out), "--quiet"]) == 0
    return out
