"""The column-wise JSON writer against orjson, value by value.

orjson (a general-purpose JSON library) is the reference: every number and instant must come
out as the very bytes orjson writes for the same value, including the corners of its float
notation (positional from 1e-5 to 1e16, exponents outside), negative zero, NaN and infinities
(null), and instants outside the years 1000-9999.
"""

from __future__ import annotations

import numpy as np
import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from skyplan.render import bytegrid as g


def rows(columns: list[np.ndarray]) -> list[bytes]:
    grid = np.stack(columns, axis=1)
    return [g.squeeze(grid[i:i + 1]) for i in range(len(grid))]


def reference_numbers(values, places: int) -> list[bytes]:
    with np.errstate(over="ignore", invalid="ignore"):
        rounded = np.round(np.asarray(values, float), places)
    return [orjson.dumps(v) for v in rounded.tolist()]


EDGES = [0.0, -0.0, 0.5, -0.5, 1.0, 9.999999, 10.0, 99.99, 100.0, 999.9995, 1000.0, 1440.0,
         123456.7, 1e-5, -1e-5, 9.99e-6, 1.5e-5, 1e-7, 5e-8, 4.9e-8, 1e14, 99999999.99999,
         1e15, 1e16, 1.5e16, 1e21, 1e300, -1e300, 5e-324, np.nan, np.inf, -np.inf,
         0.125, 0.375, 2.675, 1.005, 0.045, 359.9999999, -89.99999995]


@pytest.mark.parametrize("places", [1, 2, 3, 4, 7])
def test_decimals_match_orjson_on_edges_and_random_values(places: int) -> None:
    rng = np.random.default_rng(places)
    values = np.concatenate([EDGES, rng.uniform(-400, 400, 4000), rng.uniform(0, 2, 1000),
                             10 ** rng.uniform(-9, 17, 2000), -(10 ** rng.uniform(-9, 17, 500))])
    assert rows(g.decimals(values, places)) == reference_numbers(values, places)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True), min_size=1, max_size=40),
       st.sampled_from([1, 2, 3, 4, 5, 6, 7]))
def test_decimals_match_orjson_for_any_float(values: list[float], places: int) -> None:
    assert rows(g.decimals(values, places)) == reference_numbers(values, places)


@pytest.mark.parametrize("places", [1, 2, 3, 4, 7])
def test_decimals_as_text_match_python_repr(places: int) -> None:
    """The csv module writes ``str(float)``: Python's repr (exponent below 1e-4)."""
    rng = np.random.default_rng(10 + places)
    values = np.concatenate([EDGES, [1e-4, 9.9e-5, 1.5e-4, -1e-4], rng.uniform(-400, 400, 2000),
                             10 ** rng.uniform(-9, 17, 2000)])
    with np.errstate(over="ignore", invalid="ignore"):
        rounded = np.round(values, places).tolist()
    want = [repr(v).encode() if np.isfinite(v) else b"" for v in rounded]
    assert rows(g.decimals(values, places, text=True)) == want


def reference_instants(unix) -> list[bytes]:
    u = np.round(np.asarray(unix, float))
    ok = np.isfinite(u)
    stamps = np.where(ok, u, 0.0).astype(np.int64).astype("datetime64[s]")
    stamps[~ok] = np.datetime64("NaT", "s")
    return [orjson.dumps(m, option=orjson.OPT_NAIVE_UTC | orjson.OPT_UTC_Z)
            for m in stamps.tolist()]


def test_instants_match_orjson() -> None:
    rng = np.random.default_rng(7)
    values = np.concatenate([
        rng.uniform(1.78e9, 1.78e9 + 3 * 86400, 3000),  # a night: few dates, any second
        rng.uniform(-2.2e9, 2.5e9, 1000),  # 1900-2050: many dates (the ephemeris span)
        [0.0, -0.4, 0.5, 1.5, 2.5, -0.5, 86399.5, 86400.0, 951782400.0,  # 2000-02-29
         4102444799.0, np.nan, np.inf, -np.inf],
        [-3e10, -6.3e10, 3e11],  # years 1019, before 1000 and after 9999: written by orjson
    ])
    assert rows(g.instants(values)) == reference_instants(values)


def test_instants_as_text_match_numpy() -> None:
    values = np.array([1.78e9 + 0.5, 1.78e9 + 86399.4, np.nan, -6.3e10, 3e11])
    stamps = np.round(values[[0, 1, 3, 4]]).astype(np.int64).astype("datetime64[s]")
    text = [s.encode() + b"Z" for s in np.datetime_as_string(stamps, unit="s").tolist()]
    assert rows(g.instants(values, text=True)) == [text[0], text[1], b"", text[2], text[3]]


def test_instants_all_null_and_empty() -> None:
    assert rows(g.instants([np.nan, np.nan])) == [b"null", b"null"]
    assert rows(g.instants(np.array([]))) == []


def test_texts_choice_and_assemble() -> None:
    names = g.texts([b'"a"', b'"longer, name"', b'""'])
    flags = g.choice([True, False, True], b"true", b"false")
    grid = g.assemble(3, [b'{"n":', names, b',"f":', flags, b"}"])
    assert rows([grid[:, k] for k in range(grid.shape[1])]) == [
        b'{"n":"a","f":true}', b'{"n":"longer, name","f":false}', b'{"n":"","f":true}']



def test_records_nest_their_inner_rows() -> None:
    inner = g.assemble(3, [g.choice([True, False, True], b"", b","), b"[", g.texts(
        [b"1", b"22", b"333"]), b"]"])
    width = inner.shape[1]
    head = g.assemble(3, [b"{", g.texts([b'"a"', b'"longer, name"', b'"c"']), b":["],
                      multiple=width)
    tail = g.assemble(3, [b"]}", g.choice([True, True, False], b",", b"")], multiple=width)
    grid = g.nest(head, inner, np.array([0, 0, 2]), tail)
    assert grid.shape[1] == width
    assert g.squeeze(grid) == b'{"a":[[1],[22]]},{"longer, name":[]},{"c":[[333]]}'
    assert g.squeeze(g.nest(head, inner[:0], np.array([], dtype=int), tail)) == \
        b'{"a":[]},{"longer, name":[]},{"c":[]}'


def test_places_below_one_are_refused() -> None:
    with pytest.raises(ValueError):
        g.decimals([1.0], 0)
