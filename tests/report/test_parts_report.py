"""The package shows device states with their tests, the DC models and the new symbols."""

from __future__ import annotations

import io
from pathlib import Path

import pytest
from pypdf import PdfReader

import calcdoc
from calcdoc.format import eng
from calcdoc.report.diagram import DiagramPart, circuit_drawing
from calcdoc.report.symbols import SYMBOLS

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def relay_panel():
    from calcdoc.pipeline import analyse
    from calcdoc.report.package import build_package

    results = analyse(calcdoc.load(ROOT / "projects" / "relay_panel.toml"))
    pdf = build_package(results).pdf
    text = " ".join(p.extract_text() for p in PdfReader(io.BytesIO(pdf)).pages)
    return results, " ".join(text.split())


def test_device_states_table_with_tests_and_margins(relay_panel):
    results, text = relay_panel
    sig = results.project.report.significant_figures
    assert "Device states" in text
    for case in results.cases:
        s = case.states
        assert f"complementary pivoting (Lemke) in {s.iterations} pivot" in text
        for d in s.devices:
            assert d.holds
            for t in d.tests:
                unit = "A" if t.quantity == "current" else "V"
                assert t.text in text and eng(t.margin, unit, sig) in text


def test_method_states_dc_models_and_transients(relay_panel):
    _, text = relay_panel
    assert "every capacitor is an open circuit" in text
    assert "every coil is a short circuit" in text
    assert "Switching transients" in text and "out of scope" in text
    assert "virtual short V(+) − V(−) = 0" in text
    assert "Lemke's complementary pivoting method" in text


def test_equations_name_each_model_and_the_virtual_short(relay_panel):
    results, text = relay_panel
    assert "U1 (ideal operational amplifier): virtual short V(ref) − V(exc) = 0" in text
    nominal = results.cases[0]
    for d in nominal.states.devices:
        assert f"{d.element} (diode), {d.state}: {d.law}" in text


def test_inputs_show_every_key_and_the_across_window(relay_panel):
    _, text = relay_panel
    assert "breakdown voltage 5.100 V" in text
    assert "output range 100.0 mV to 22.00 V" in text
    assert "100.0 V reverse" in text
    assert "V(exc) − V(low) window (sensor_excitation)" in text


@pytest.mark.parametrize("name", sorted(SYMBOLS))
@pytest.mark.parametrize("a_on_top", [True, False])
def test_symbols_stay_on_their_branch(name, a_on_top):
    # The branch wire stops 11 pt above and below the centre and the label starts
    # 15 pt to the right: a symbol must fit between.
    g = SYMBOLS[name](100.0, 200.0, a_on_top, "open", "Helvetica")
    x0, y0, x1, y1 = g.getBounds()
    assert y0 >= 200 - 11 - 1e-9 and y1 <= 200 + 11 + 1e-9
    assert x1 <= 100 + 10 and x0 >= 100 - 16


def test_contact_drawn_open_or_closed():
    def blade(state):
        g = SYMBOLS["contact"](0.0, 0.0, True, state)
        return [(c.x1, c.y1, c.x2, c.y2) for c in g.contents if hasattr(c, "x2")][-1]

    assert blade("open") != blade("closed")
    assert blade("open")[2] < blade("closed")[2]  # the open blade stands further off


def test_diagram_draws_every_new_part():
    parts = [
        DiagramPart("V1", "voltage_source", ("a", "gnd"), "5 V"),
        DiagramPart("K1", "switch", ("a", "b"), "open", "contact", "open"),
        DiagramPart("D1", "diode", ("b", "c"), "Vf 700 mV", "diode"),
        DiagramPart("Z1", "diode", ("gnd", "c"), "Vf 700 mV, Vbr 5.1 V", "zener"),
        DiagramPart("D2", "diode", ("c", "gnd"), "Vf 2 V", "led"),
        DiagramPart("C1", "capacitor", ("c", "gnd"), "1 µF", "capacitor"),
        DiagramPart("L1", "inductor", ("b", "gnd"), "1 H", "coil"),
        DiagramPart("U1", "opamp", ("d", "gnd"), "+ c, − d", "opamp"),
    ]
    drawing = circuit_drawing(parts, "gnd", width=500, font_name="Helvetica")
    assert drawing is not None
