"""Shared fixtures. Paths are built from this file, never from the working directory."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
INPUTS = ROOT / "inputs"
DEMO = INPUTS / "demo_fixed_tilt.toml"


@pytest.fixture(scope="session")
def demo_case():
    from lcoe.case.reader import load_case

    return load_case(DEMO)


@pytest.fixture(scope="session")
def demo_site(demo_case):
    from lcoe.model import prepare

    return prepare(demo_case)


@pytest.fixture(scope="session")
def bundled_weather():
    from lcoe.site.weather import bundled_weather_path, read_weather

    return read_weather(bundled_weather_path())


def write_case(tmp_path: Path, text: str, name: str = "case.toml") -> Path:
    """Write a case file into ``tmp_path`` and return its path."""
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


MINIMAL_CASE = """
[case]
name = "t"
lifetime_years = 25
[site]
latitude_deg = 36.1
longitude_deg = -79.95
altitude_m = 273.0
[plant]
dc_capacity_kw = 1000.0
[costs]
capex_per_kw = 1000.0
[finance]
discount_rate = 0.07
"""
