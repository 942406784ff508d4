"""``calcdoc schema``: a JSON Schema (draft 2020-12) of the project file that agrees
with the loader.

The schema is judged by ``jsonschema`` (PyPI), a general-purpose reference
validator, against the draft 2020-12 meta-schema published at
json-schema.org; each demo project, the starter and the test circuits must
be valid under it, and for every edit below the loader and the schema must
give the same verdict.
"""

from __future__ import annotations

import json

import pytest
import tomli
from command_helpers import run_calcdoc
from jsonschema import Draft202012Validator
from schema_helpers import (
    CASE_FILES,
    DEMOS,
    ROOT,
    STARTER,
    added,
    loader_faults,
    read,
    removed,
    renamed,
    require_valid,
    schema_errors,
    toml_text,
)

import calcdoc
from calcdoc.model.schema import project_schema

FILES = {p.name: p for p in [*DEMOS, STARTER]}


def test_schema_command_prints_a_draft_2020_12_schema(tmp_path):
    proc = run_calcdoc("schema")
    assert proc.returncode == 0, proc.stderr
    schema = json.loads(proc.stdout)
    # the dialect URI of draft 2020-12 (json-schema.org, "JSON Schema Core", section 8.1.1)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    Draft202012Validator.check_schema(schema)  # raises if not valid under the meta-schema
    assert schema == project_schema()
    # as README tells: saved to a file, read back as JSON
    out = tmp_path / "calcdoc.schema.json"
    out.write_text(proc.stdout, encoding="utf-8")
    assert json.loads(out.read_text(encoding="utf-8")) == schema


def test_an_empty_file_is_not_a_project():
    assert loader_faults({}) and schema_errors({})  # no [elements]


@pytest.mark.parametrize("path", [*DEMOS, STARTER, *CASE_FILES], ids=lambda p: p.name)
def test_demos_starter_and_test_circuits_are_valid(path):
    calcdoc.load(path)  # the loader accepts it ...
    require_valid(read(path), path.name)  # ... and so does the schema


# (file, key path, misspelling): the loader names the misspelt key's path; the
# schema flags it as unexpected.
MISSPELT = [
    ("sensor_supply.toml", "document", "documnet"),
    ("sensor_supply.toml", "document.title", "titel"),
    ("sensor_supply.toml", "document.history[0].date", "dte"),
    ("sensor_supply.toml", "signoff.checked", "cheked"),
    ("sensor_supply.toml", "signoff.prepared.name", "nmae"),
    ("sensor_supply.toml", "circuit.reference", "refrence"),
    ("sensor_supply.toml", "elements.Rs.value", "valeu"),
    ("sensor_supply.toml", "elements.Rs.tolerance", "tolerence"),
    ("sensor_supply.toml", "elements.Rs.series", "serie"),
    ("sensor_supply.toml", "elements.Rs.rating.power", "powr"),
    ("sensor_supply.toml", "limits.power_fraction", "power_fractoin"),
    ("sensor_supply.toml", "limits.nodes.field.min", "mni"),
    ("sensor_supply.toml", "cases[0].set", "sett"),
    ("sensor_supply.toml", "analysis.tolerance", "toleranse"),
    ("bridge_amplifier.toml", "parameters.r_gauge.description", "descripton"),
    ("bridge_amplifier.toml", "elements.Amp.gain", "gian"),
    ("bridge_amplifier.toml", "elements.Amp.control", "contorl"),
    ("bridge_amplifier.toml", "sweeps[0].outputs", "output"),
    ("bridge_amplifier.toml", "sweeps[0].points", "pionts"),
    ("relay_panel.toml", "elements.K1.state", "stat"),
    ("relay_panel.toml", "elements.D_fly.forward_voltage", "forward_volts"),
    ("relay_panel.toml", "elements.L_coil.resistance", "resistence"),
    ("relay_panel.toml", "elements.U1.output_range", "output_rnage"),
    ("relay_panel.toml", "limits.across[0].description", "descr"),
    ("instrument_loop.toml", "document.history[2].description", "decription"),
    ("starter.toml", "elements.Rseries.derating.knee", "kne"),
    ("starter.toml", "elements.Rseries.tcr", "tc"),
    ("starter.toml", "limits.ambient", "ambeint"),
    ("starter.toml", "parameters.cable_r.tolerance", "tol"),
    ("starter.toml", "analysis.sensitivity", "sensitivty"),
    ("starter.toml", "sweeps[0].scale", "scael"),
    ("starter.toml", "report.significant_figures", "significant_figure"),
    ("starter.toml", "report", "reprot"),
]


@pytest.mark.parametrize(("name", "path", "wrong"), MISSPELT)
def test_loader_and_schema_refuse_the_same_misspelling(name, path, wrong):
    data = renamed(read(FILES[name]), path, wrong)
    wrong_path = path.rpartition(".")[0] + "." + wrong if "." in path else wrong
    faults = loader_faults(data)
    assert any(p == wrong_path and "unknown key" in m for p, m in faults), faults
    assert any(f"'{wrong}' was unexpected" in e for e in schema_errors(data))


# (file, key path, value): a key that belongs to another element type, or to none
ADDED = [
    ("sensor_supply.toml", "elements.Rs.gain", "2"),  # a resistor given a gain
    ("sensor_supply.toml", "elements.PSU.control", ["bus", "gnd"]),
    ("relay_panel.toml", "elements.U1.value", "1 kohm"),  # an op-amp has no value
    ("relay_panel.toml", "elements.D_fly.state", "conducting"),  # a diode's state is found
    ("relay_panel.toml", "elements.C_bus.resistance", "1 ohm"),
    ("relay_panel.toml", "elements.C_bus.rating.current", "1 A"),  # rated by voltage only
    ("relay_panel.toml", "elements.K1.symbol", "led"),
    ("relay_panel.toml", "elements.K1.rating.reverse_voltage", "50 V"),
    ("starter.toml", "elements.Rin.vaule", "10 kohm"),
]


@pytest.mark.parametrize(("name", "path", "value"), ADDED)
def test_loader_and_schema_refuse_a_key_the_type_does_not_take(name, path, value):
    data = added(read(FILES[name]), path, value)
    key = path.rpartition(".")[2]
    faults = loader_faults(data)
    assert any(p == path and ("unknown key" in m or "takes no" in m) for p, m in faults), faults
    assert any(f"'{key}' was unexpected" in e for e in schema_errors(data))


# (file, key path): a key that must be given, taken out
REQUIRED = [
    ("sensor_supply.toml", "elements"),
    ("sensor_supply.toml", "elements.Rs.type"),
    ("sensor_supply.toml", "elements.Rs.nodes"),
    ("sensor_supply.toml", "elements.Rs.value"),
    ("sensor_supply.toml", "document.history[0].revision"),
    ("sensor_supply.toml", "signoff.prepared.name"),
    ("sensor_supply.toml", "cases[0].name"),
    ("sensor_supply.toml", "limits.nodes.field.min"),  # a window needs min, max or both
    ("bridge_amplifier.toml", "parameters.r_gauge.value"),
    ("bridge_amplifier.toml", "elements.Amp.control"),
    ("bridge_amplifier.toml", "sweeps[0].target"),
    ("bridge_amplifier.toml", "sweeps[0].from"),
    ("bridge_amplifier.toml", "sweeps[0].outputs"),
    ("relay_panel.toml", "elements.D_fly.forward_voltage"),
    ("relay_panel.toml", "elements.U1.control"),
    ("relay_panel.toml", "limits.across[0].name"),
    ("relay_panel.toml", "limits.across[0].nodes"),
    ("starter.toml", "elements.Rseries.derating.zero"),
]


@pytest.mark.parametrize(("name", "path"), REQUIRED)
def test_loader_and_schema_refuse_a_missing_key(name, path):
    data = removed(read(FILES[name]), path)
    assert loader_faults(data)
    assert schema_errors(data)


# (file, key path, value, accepted): forms of a value both must accept, and
# values outside an enumeration or range both must refuse.
VERDICTS = [
    ("sensor_supply.toml", "limits.power_fraction", "50 %", True),
    ("sensor_supply.toml", "limits.power_fraction", 1, True),
    ("sensor_supply.toml", "limits.power_fraction", 1.5, False),
    ("sensor_supply.toml", "limits.power_fraction", 0, False),
    ("sensor_supply.toml", "elements.Rs.tolerance", 0.01, True),
    ("sensor_supply.toml", "elements.Rs.tolerance", {"minus": "2 %", "plus": 0.01}, True),
    ("sensor_supply.toml", "elements.Rs.tolerance", {"minus": "2 %"}, False),
    ("sensor_supply.toml", "elements.Rs.tolerance", -0.01, False),
    ("sensor_supply.toml", "elements.Rs.derating", {"knee": "70 °C", "zero": "428.15 K"}, True),
    ("sensor_supply.toml", "elements.Rs.series", "E25", False),
    ("sensor_supply.toml", "elements.Rs.nodes", ["field", "gnd", "bus"], False),
    ("sensor_supply.toml", "elements.Rs.nodes", ["field", "gnd!"], False),
    ("sensor_supply.toml", "elements.Rs.type", "resistr", False),
    ("sensor_supply.toml", "document.assumptions", "One assumption, as one string.", True),
    ("sensor_supply.toml", "document.assumptions", [1, 2], False),
    ("sensor_supply.toml", "document.date", "2026-11-20", True),
    ("sensor_supply.toml", "document.title", 42, False),
    ("sensor_supply.toml", "parameters.spare", 2, True),  # a parameter may be a plain number
    ("sensor_supply.toml", "parameters.spare", {"value": "3 m", "tolerance": "5 %"}, True),
    ("sensor_supply.toml", "parameters.spare", {"tolerance": "5 %"}, False),
    ("sensor_supply.toml", "cases[0].set", {"PSU": "21.6 V", "conductor_r": "22 mohm/m"}, True),
    ("sensor_supply.toml", "analysis.tolerance", "extremes", False),
    ("sensor_supply.toml", "analysis.tolerance", "rss", True),
    ("sensor_supply.toml", "analysis.distribution", "gauss", False),
    ("sensor_supply.toml", "analysis.samples", 500, True),
    ("sensor_supply.toml", "analysis.samples", 5, False),
    ("sensor_supply.toml", "analysis.seed", -1, False),
    ("sensor_supply.toml", "report", {"paper": "Letter", "significant_figures": 5}, True),
    ("sensor_supply.toml", "report", {"paper": "A3"}, False),
    ("sensor_supply.toml", "report", {"significant_figures": 12}, False),
    ("sensor_supply.toml", "schema", 2, False),
    ("bridge_amplifier.toml", "elements.Amp.gain", 100, True),  # a dimensionless gain
    ("bridge_amplifier.toml", "sweeps[0].points", 1, False),
    ("bridge_amplifier.toml", "sweeps[0].scale", "logarithmic", False),
    ("relay_panel.toml", "elements.K1.state", "shut", False),
    ("relay_panel.toml", "elements.D_led.symbol", "lamp", False),
    ("relay_panel.toml", "elements.U1.output_range", ["0.1 V"], False),
    ("relay_panel.toml", "cases[0].set", {"S1": "closed", "K1": "open"}, True),
    # what the schema leaves out on purpose, the loader refuses whatever the value:
    ("relay_panel.toml", "elements.U1.tolerance", "1 %", False),  # an op-amp has no value
    ("relay_panel.toml", "elements.C_bus.series", "E12", False),  # series: resistances only
    ("relay_panel.toml", "elements.S1.tolerance", "10 %", False),  # no contact resistance given
    ("relay_panel.toml", "elements.K1.tolerance", "10 %", True),  # contact resistance given
]


@pytest.mark.parametrize(("name", "path", "value", "accepted"), VERDICTS)
def test_loader_and_schema_give_the_same_verdict(name, path, value, accepted):
    data = added(read(FILES[name]), path, value)
    faults, errors = loader_faults(data), schema_errors(data)
    assert (not faults, not errors) == (accepted, accepted), (faults, errors)


def test_readme_says_how_to_use_the_schema():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    assert "calcdoc schema > calcdoc.schema.json" in readme
    assert "#:schema ./calcdoc.schema.json" in readme


@pytest.mark.parametrize("path", [*DEMOS, STARTER], ids=lambda p: p.name)
def test_the_test_writer_round_trips(path):
    """The edited projects above are written by tests/schema_helpers.toml_text: read back
    by tomli (a TOML 1.0 reader), each demo comes back unchanged."""
    data = read(path)
    assert tomli.loads(toml_text(data)) == data


def test_the_examples_in_the_descriptions_have_their_units():
    """Each example value the descriptions give is of its dimension, as the units
    library pint (PyPI, a general-purpose reference) reads it."""
    import pint

    from calcdoc.model.quantities import SI_SYMBOL
    from calcdoc.model.schema import EXAMPLES

    ureg = pint.UnitRegistry()
    for dim, text in EXAMPLES.items():
        si = SI_SYMBOL.get(dim, "1/K").replace("Ω", "ohm")
        assert ureg.Quantity(text.strip('"')).to(si).magnitude > 0, text
