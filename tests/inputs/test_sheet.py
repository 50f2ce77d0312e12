"""Section sheets: reading, units, errors that name the field, and the exact round trip."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from tracer.errors import GeometryError, ShapeError, SheetError
from tracer.section.geometry import Section
from tracer.section.properties import PROPERTY_KEYS, section_properties
from tracer.inputs.sheet import parse_sheet, read_sheet, sheet_text, write_sheet
from tracer.section.shapes import i_section, rectangle

from tests.common import rectangle_ring, star_ring

EXAMPLES = sorted((Path(__file__).parents[2] / "tracer" / "examples").glob("*.toml"))


def test_shape_sheet_in_mm():
    m = parse_sheet('units = "mm"\nname = "b"\n[shape]\nkind = "i-section"\nh = 200\nb = 100\ntw = 5.6\ntf = 8.5\nr = 12\n')
    ref = section_properties(i_section(h=200, b=100, tw=5.6, tf=8.5, r=12))
    assert section_properties(m.section).Ix == pytest.approx(ref.Ix, rel=1e-14)
    assert m.name == "b" and m.source["geometry"] == "shape" and m.source["shape"]["kind"] == "i-section"


@pytest.mark.parametrize("unit,factor", [("mm", 1.0), ("cm", 10.0), ("m", 1000.0), ("in", 25.4), ("ft", 304.8)])
def test_units_are_converted_to_mm(unit, factor):
    # 1 in = 25.4 mm and 1 ft = 304.8 mm exactly (international yard and pound, 1959).
    m = parse_sheet(f'units = "{unit}"\n[shape]\nkind = "rectangle"\nb = 2\nh = 3\n')
    assert section_properties(m.section).A == pytest.approx(6 * factor**2, rel=1e-14)


def test_outline_with_holes_and_parts():
    m = parse_sheet('units = "mm"\n[outline]\npoints = [[0,0],[10,0],[10,10],[0,10]]\n'
                    'holes = [[[2,2],[4,2],[4,4],[2,4]]]\n')
    assert section_properties(m.section).A == pytest.approx(96.0)
    m = parse_sheet('units = "cm"\n[[outline.parts]]\npoints = [[0,0],[1,0],[1,1],[0,1]]\n'
                    '[[outline.parts]]\npoints = [[2,0],[3,0],[3,1],[2,1]]\n')
    assert m.section.n_parts == 2 and section_properties(m.section).A == pytest.approx(200.0)


def test_stations_sheet_and_uncertainty():
    m = parse_sheet('units = "cm"\n[uncertainty]\nresolution = 0.1\n[stations]\nrows = [[0, 0, 4], [10, 0.5, 3.5]]\n')
    assert section_properties(m.section).A == pytest.approx(350.0 * 100 / 10, rel=1e-14)
    assert m.uncertainty == {"resolution": 1.0}   # in mm


def test_the_name_defaults_to_the_file_stem(tmp_path):
    f = tmp_path / "bay-3-joist.toml"
    f.write_text('units = "mm"\n[shape]\nkind = "round"\nd = 10\n')
    assert read_sheet(f).name == "bay-3-joist"
    assert read_sheet(f).source["sha256"] == __import__("hashlib").sha256(f.read_bytes()).hexdigest()


@pytest.mark.parametrize("text,error,message", [
    ('units = "mm"\n[shape]\nkind = "hexagon"\n', SheetError, r"shape.kind = 'hexagon' is not a shape"),
    ('units = "mm"\n[shape]\nkind = "i-section"\nh = 200\nb = 100\ntw = 5\n', SheetError,
     r"shape.tf is missing; an i-section needs h, b, tw, tf"),
    ('units = "mm"\n[shape]\nkind = "tube"\nd = 100\nt = -3\n', SheetError, r"shape.t = -3 must not be negative"),
    ('units = "mm"\n[shape]\nkind = "tube"\nd = 100\nt = "3"\n', SheetError, r"shape.t = '3' is not a number"),
    ('units = "mm"\n[shape]\nkind = "tube"\nd = 100\nthk = 3\n', SheetError, r"unknown field shape.thk"),
    ('units = "mm"\n[shape]\nkind = "tube"\nd = 100\nt = 60\n', ShapeError, r"shape: tube: t = 60 mm must be less than d/2"),
    ('units = "yd"\n[shape]\nkind = "round"\nd = 1\n', SheetError, r"units = 'yd' is not a length unit"),
    ('[shape]\nkind = "round"\nd = 1\n', SheetError, r"units is missing"),
    ('units = "mm"\n[shape]\nkind = "round"\nd = 1\n[outline]\npoints = [[0,0],[1,0],[0,1]]\n', SheetError,
     r"exactly one of \[shape\], \[outline\], \[stations\]; this sheet has \[shape\] and \[outline\]"),
    ('units = "mm"\nname = "x"\n', SheetError, r"this sheet has none"),
    ('units = "mm"\n[outline]\npoints = [[0,0],[1,0,3],[0,1]]\n', SheetError,
     r"outline.points\[2\] = \[1, 0, 3\] is not a pair \[x, y\]"),
    ('units = "mm"\n[outline]\npoints = [[0,0],[1,0],[0,1]]\nholes = [[[0,0],[1,0]]]\n', SheetError,
     r"outline.holes\[1\] has 2 point\(s\)"),
    ('units = "mm"\n[outline]\npoints = [[0,0],[10,0],[10,10],[0,10]]\nholes = [[[20,20],[30,20],[30,30]]]\n',
     GeometryError, r"hole 1 lies outside the outline"),
    ('units = "mm"\n[outline]\npoints = [[0,0],[10,0],[10,10],[0,10]]\npoint = 3\n', SheetError,
     r"unknown field outline.point \(did you mean outline.points\?\)"),
    ('units = "mm"\n[stations]\nrows = [[0, 0, 4], [10, 0.5]]\n', SheetError, r"stations.rows\[2\] = \[10, 0.5\] must be three"),
    ('units = "mm"\n[stations]\nrows = [[0, 0, 4], [0, 0.5, 3]]\n', GeometryError, r"stations: stations 1 and 2 are both at y = 0"),
    ('units = "mm"\n[uncertainty]\nreading = 0.1\nresolution = 0.01\n[shape]\nkind = "round"\nd = 1\n', SheetError,
     r"uncertainty has both reading and resolution"),
    ('units = "mm"\n[uncertainty]\nreading = 0\n[shape]\nkind = "round"\nd = 1\n', SheetError,
     r"uncertainty.reading = 0 must be greater than zero"),
    ('units = "mm"\nshpe = 3\n', SheetError, r"unknown field shpe \(did you mean shape\?\)"),
    ('units = "mm"\n[shape]\nkind = "rectangle"\nb = 40\nh = 100\nwane = {top = 3}\n', SheetError,
     r"unknown field shape.wane.top"),
    ('units = "mm"\n[shape]\nkind = "rectangle"\nb = 40\nh = 100\nwane = [1, 2, 3]\n', SheetError,
     r"shape.wane = \[1, 2, 3\] must be a size or a pair"),
    ('units = "mm"\n[shape\n', SheetError, r"not valid TOML"),
])
def test_errors_name_the_field(text, error, message):
    with pytest.raises(error, match=message):
        parse_sheet(text, path="s.toml")


def test_error_messages_start_with_the_file(tmp_path):
    f = tmp_path / "joist.toml"
    f.write_text('units = "mm"\n[shape]\nkind = "tube"\nd = 100\nt = -3\n')
    with pytest.raises(SheetError, match=r"^.*joist.toml: shape.t = -3 must not be negative$"):
        read_sheet(f)
    with pytest.raises(SheetError, match=r"no such file"):
        read_sheet(tmp_path / "missing.toml")
    (tmp_path / "bin.toml").write_bytes(b"\xff\xfe\x00\x01")
    with pytest.raises(SheetError, match=r"not a text file"):
        read_sheet(tmp_path / "bin.toml")


def _props(section):
    return section_properties(section).values()


@pytest.mark.parametrize("units", ["mm", "cm", "in", "ft", "m"])
def test_sheet_round_trip_is_exact(units, tmp_path):
    rng = np.random.default_rng(11)
    sections = [
        i_section(h=200, b=100, tw=5.6, tf=8.5, r=12),
        rectangle(b=47, h=150, wane={"top_left": 12.0, "bottom_right": [5.0, 9.0]}),
        Section(star_ring(rng, 40, centre=(123.4, -56.7)), [rectangle_ring(120, -60, 125, -50)]),
        Section.from_parts([rectangle_ring(0, 0, 10, 10), rectangle_ring(12, 0, 20, 7)]),
    ]
    for i, s in enumerate(sections):
        path = tmp_path / f"s{i}.toml"
        write_sheet(path, s, name=f"member {i} \"quoted\" ünï", units=units, uncertainty={"reading": 0.05})
        m = read_sheet(path)
        assert m.name == f"member {i} \"quoted\" ünï"
        assert m.uncertainty["reading"] == pytest.approx(0.05, rel=1e-12)
        for a, b in zip(s.rings(), m.section.rings()):
            assert np.allclose(a[0], b[0], rtol=1e-12, atol=1e-12)
        before, after = _props(s), _props(m.section)
        for key in PROPERTY_KEYS:
            scale = max(abs(before[key]), 1e-9 * abs(before["Ip"]) if key == "Ixy" else 1e-300)
            if key == "theta":
                assert abs(after[key] - before[key]) <= 1e-9
            else:
                assert abs(after[key] - before[key]) <= 1e-9 * scale, key


def test_written_sheet_is_readable_toml_a_person_can_edit():
    text = sheet_text(Section(rectangle_ring(0, 0, 47, 150)), name="J-7", units="mm")
    assert 'units = "mm"' in text and "[outline]" in text and "[47.0, 150.0]" in text
    edited = text.replace("[47.0, 150.0]", "[47.0, 140.0]")   # a person lowers one corner
    p = section_properties(parse_sheet(edited).section)
    assert p.A == pytest.approx(47 * 150 - 0.5 * 47 * 10)


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_bundled_examples_read_and_say_they_are_invented(path):
    m = read_sheet(path)
    assert "invented example" in m.name.lower()
    assert "Invented example" in path.read_text()
    assert section_properties(m.section).A > 0


# -- the error model a sheet states ----------------------------------------------------------------
def test_reading_uncertainty_of_a_shape_propagates_to_every_property():
    from tracer.result import measure

    m = parse_sheet('units = "cm"\n[uncertainty]\nreading = 0.01\n[shape]\nkind = "rectangle"\nb = 4.7\nh = 19.5\n')
    r = measure(m)
    # A = b h with u_b = u_h = 0.1 mm: u(A) = 0.1 sqrt(b^2 + h^2) mm^2 (JCGM 100:2008, eq. 10).
    assert r.u["A"] == pytest.approx(0.1 * np.hypot(47, 195), rel=1e-9)
    assert set(r.u) == set(PROPERTY_KEYS)


def test_resolution_and_scale_in_a_sheet():
    from tracer.result import measure
    from tracer.uncertainty import Readings, ScaleError

    m = parse_sheet('units = "mm"\n[uncertainty]\nresolution = 0.1\nscale = 0.002\n'
                    '[shape]\nkind = "rectangle"\nb = 40\nh = 100\n')
    kinds = {type(c) for c in m.error_model.components}
    assert kinds == {Readings, ScaleError}
    readings = next(c for c in m.error_model.components if isinstance(c, Readings))
    assert readings.distribution == "rectangular" and readings.u[0] == pytest.approx(0.1 / np.sqrt(12))
    r = measure(m)
    # Readings: (h u)^2 + (b u)^2; scale about the origin: dA/de = 2A (A goes as length^2).
    expected = np.sqrt((100**2 + 40**2) * (0.1 / np.sqrt(12)) ** 2 + (2 * 4000 * 0.002) ** 2)
    assert r.u["A"] == pytest.approx(expected, rel=1e-9)


def test_outline_and_station_sheets_name_their_inputs():
    from tracer.uncertainty import PointNoise, Readings

    m = parse_sheet('units = "mm"\n[uncertainty]\nreading = 0.2\n[outline]\npoints = [[0,0],[10,0],[10,10],[0,10]]\n')
    assert isinstance(m.error_model.components[0], PointNoise)
    m = parse_sheet('units = "mm"\n[uncertainty]\nreading = 0.2\n[stations]\nrows = [[0, 0, 40], [100, 5, 35]]\n')
    c = m.error_model.components[0]
    assert isinstance(c, Readings) and c.names[:3] == ("stations.rows[1].y", "stations.rows[1].x_left",
                                                      "stations.rows[1].x_right")


def test_zero_dimensions_are_exact_and_wane_legs_are_readings():
    m = parse_sheet('units = "mm"\n[uncertainty]\nreading = 0.5\n[shape]\nkind = "rectangle"\nb = 47\nh = 150\n'
                    'wane = { top_left = [10, 20], top_right = 0 }\n')
    assert m.error_model.components[0].names == ("shape.b", "shape.h", "shape.wane.top_left[1]",
                                                 "shape.wane.top_left[2]")


@pytest.mark.parametrize("text,message", [
    ('units = "mm"\n[uncertainty]\nreading = 10\n[shape]\nkind = "i-section"\nh = 200\nb = 100\ntw = 5.6\ntf = 8.5\n',
     r"uncertainty.reading = 10.0 is larger than shape.tw = 5.6"),
    ('units = "in"\n[uncertainty]\nresolution = 0.5\n[shape]\nkind = "tube"\nd = 4\nt = 0.25\n',
     r"uncertainty.resolution = 0.5 is larger than shape.t = 0.25"),
    ('units = "mm"\n[uncertainty]\nreading = 20\n[outline]\npoints = [[0,0],[100,0],[100,10],[0,10]]\n',
     r"larger than the outline's smaller extent = 10.0"),
    ('units = "mm"\n[uncertainty]\nreading = 50\n[stations]\nrows = [[0, 0, 40], [100, 5, 35]]\n',
     r"larger than the narrowest station's width = 30.0"),
    ('units = "mm"\n[uncertainty]\nreading = -0.1\n[shape]\nkind = "round"\nd = 10\n',
     r"uncertainty.reading = -0.1 must not be negative"),
    ('units = "mm"\n[uncertainty]\nscale = 0.7\n[shape]\nkind = "round"\nd = 10\n',
     r"uncertainty.scale = 0.7 is a relative uncertainty"),
    ('units = "mm"\n[uncertainty]\nsigma = 0.1\n[shape]\nkind = "round"\nd = 10\n',
     r"unknown field uncertainty.sigma"),
])
def test_bad_uncertainties_name_the_field(text, message):
    with pytest.raises(SheetError, match=message):
        parse_sheet(text)
