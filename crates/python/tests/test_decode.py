"""`Decoder.decode` against `hedgerow decode` on the same data, row for row, and its refusals
with the command line's messages."""

import csv
import io

import numpy as np
import pytest

import hedgerow
from conftest import DEMO, run_cli


def cli_decode(tmp_path, logits, profile, objectness=True):
    """`hedgerow decode` on `logits` as (column, depth, probability) arrays."""
    path = tmp_path / "logits.npy"
    np.save(path, logits)
    args = ["decode", "--taxonomy", DEMO / "taxonomy.csv", "--logits", path, "--profile", profile]
    if objectness:
        args += ["--objectness", DEMO / "objectness.npy"]
    else:
        args += ["--no-objectness"]
    rows = list(csv.DictReader(io.StringIO(run_cli(*args).stdout)))
    ids = {i: c for c, i in enumerate(hedgerow.Decoder(DEMO / "taxonomy.csv").node_ids)}
    column = np.array(
        [hedgerow.ABSTAINED if r["abstained"] == "true" else ids.get(r["predicted"], hedgerow.ROOT)
         for r in rows])
    depth = np.array([int(r["depth"] or 0) for r in rows])
    probability = np.array([float(r["probability"]) for r in rows])
    return column, depth, probability


def assert_same(out, expected):
    column, depth, probability = expected
    assert out["column"].dtype == np.int64 and out["depth"].dtype == np.int32
    assert out["probability"].dtype == np.float64
    np.testing.assert_array_equal(out["column"], column)
    np.testing.assert_array_equal(out["depth"], depth)
    # Exact: the CLI prints the shortest digits that read back to the same float64.
    np.testing.assert_array_equal(out["probability"], probability)


@pytest.mark.parametrize("dtype", ["float16", "float32", "float64"])
@pytest.mark.parametrize("order", ["C", "F"])
def test_decode_equals_the_cli_row_for_row(tmp_path, demo, profiles, dtype, order):
    logits = np.asarray(demo["logits"], dtype=dtype, order=order)
    if order == "F":
        assert logits.flags.f_contiguous and not logits.flags.c_contiguous
    dec = hedgerow.Decoder(DEMO / "taxonomy.csv", profiles["objectness"])
    out = dec.decode(logits, demo["objectness"])
    expected = cli_decode(tmp_path, logits, profiles["objectness"])
    assert_same(out, expected)
    # Some rows of each kind, so the comparison covers them all.
    assert {hedgerow.ABSTAINED, hedgerow.ROOT} <= set(out["column"].tolist())
    assert (out["depth"] == dec.depth).any()
    assert_same(dec.decode(logits, demo["objectness"], threads=3), expected)


def test_decode_with_overrides_the_conditional_rule_and_no_objectness(tmp_path, demo, profiles):
    dec = hedgerow.Decoder(str(DEMO / "taxonomy.csv"), str(profiles["nodes"]))
    out = dec.decode(demo["logits"], no_objectness=True)
    assert_same(out, cli_decode(tmp_path, demo["logits"], profiles["nodes"], objectness=False))


def test_a_strided_view_is_read_in_place(tmp_path, demo, profiles):
    # Every other row of a float32 copy: neither C- nor Fortran-contiguous.
    view = np.asarray(demo["logits"], dtype="float32")[::2]
    assert not view.flags.c_contiguous and not view.flags.f_contiguous
    dec = hedgerow.Decoder(DEMO / "taxonomy.csv", profiles["plain"])
    assert_same(dec.decode(view), cli_decode(tmp_path, view, profiles["plain"], objectness=False))


def test_taxonomy_and_profile_from_memory(demo, profiles):
    text = (DEMO / "taxonomy.csv").read_text()
    profile = profiles["objectness"].read_text()
    by_path = hedgerow.Decoder(DEMO / "taxonomy.csv", profiles["objectness"])
    for tax, prof in [(text, profile), (text.encode(), profile.encode()),
                      (text, __import__("json").loads(profile))]:
        dec = hedgerow.Decoder(tax, prof)
        a = dec.decode(demo["logits"][:500], demo["objectness"][:500])
        b = by_path.decode(demo["logits"][:500], demo["objectness"][:500])
        for k in a:
            np.testing.assert_array_equal(a[k], b[k])


def test_keyword_settings_override_the_profile(tmp_path, demo, profiles):
    dec = hedgerow.Decoder(DEMO / "taxonomy.csv", profiles["plain"], thresholds=[0.9, 0.8],
                           rule="conditional")
    out = dec.decode(demo["logits"])
    args = ["decode", "--taxonomy", DEMO / "taxonomy.csv", "--logits", DEMO / "logits.npy",
            "--profile", profiles["plain"], "--thresholds", "0.9,0.8", "--rule", "conditional"]
    rows = list(csv.DictReader(io.StringIO(run_cli(*args).stdout)))
    assert dec.ids(out["column"]) == [r["predicted"] for r in rows]


def test_ids_of_columns(profiles):
    dec = hedgerow.Decoder(DEMO / "taxonomy.csv")
    assert dec.ids([hedgerow.ROOT, hedgerow.ABSTAINED, 0]) == ["", None, dec.node_ids[0]]
    with pytest.raises(ValueError, match="row 1: 9999"):
        dec.ids([0, 9999])


def test_a_profile_for_another_taxonomy_is_refused_as_the_cli_refuses_it(tmp_path, profiles):
    lines = (DEMO / "taxonomy.csv").read_text().splitlines()
    other = tmp_path / "other.csv"
    other.write_text("\n".join(lines[:-1]) + "\n")
    cli = run_cli("decode", "--taxonomy", other, "--logits", DEMO / "logits.npy",
                  "--profile", profiles["plain"], check=False)
    assert cli.returncode == 2
    message = cli.stderr.strip().removeprefix("error: ")
    assert "another taxonomy" in message
    with pytest.raises(ValueError) as e:
        hedgerow.Decoder(str(other), str(profiles["plain"]))
    assert str(e.value) == message


@pytest.mark.parametrize("dtype", ["float16", "float32", "float64"])
@pytest.mark.parametrize("order", ["C", "F"])
def test_a_value_that_is_not_finite_is_named_by_row_and_column(tmp_path, demo, dtype, order):
    logits = np.array(demo["logits"][:150], dtype=dtype, order=order)  # a copy: it is changed
    # Past the first block of rows the engine checks at once, and an inf after it.
    logits[77, 3] = np.nan
    logits[99, 5] = np.inf
    path = tmp_path / "bad.npy"
    np.save(path, logits)
    cli = run_cli("decode", "--taxonomy", DEMO / "taxonomy.csv", "--logits", path, check=False)
    first = cli.stderr.splitlines()[0].removeprefix("error: ").replace(str(path), "logits")
    dec = hedgerow.Decoder(DEMO / "taxonomy.csv")
    for threads in [1, 4]:
        with pytest.raises(ValueError) as e:
            dec.decode(logits, threads=threads)
        assert str(e.value) == first
        assert "row 77, column 3" in str(e.value)
    logits[77, 3] = 0
    with pytest.raises(ValueError, match="row 99, column 5 .*found inf"):
        dec.decode(logits)


def test_bad_arrays_raise_value_error(demo, profiles):
    dec = hedgerow.Decoder(DEMO / "taxonomy.csv", profiles["objectness"])
    m = len(dec.node_ids)
    obj = demo["objectness"][:10]
    cases = [
        (np.zeros(m, dtype="float32"), obj, "shape (173,): expected (rows, 173)"),
        (np.zeros((10, m - 1), dtype="float32"), obj, "172 columns, but the taxonomy has 173 nodes"),
        (np.zeros((10, m), dtype="int64"), obj, "dtype `int64`: expected float16, float32 or float64"),
        (np.zeros((10, m), dtype=">f4"), obj, "dtype `>f4`"),
        ([[0.0] * m] * 10, obj, "expected a numpy array"),
        (np.zeros((10, m), dtype="float32"), obj[:9], "objectness: 9 rows, but logits has 10 rows"),
        (np.zeros((10, m), dtype="float32"), obj * 2, "objectness, row 0: expected a probability"),
        (np.zeros((10, m), dtype="float32"), None, "scored with objectness"),
    ]
    for logits, objectness, message in cases:
        with pytest.raises(ValueError) as e:
            dec.decode(logits, objectness)
        assert message in str(e.value), (message, str(e.value))
    with pytest.raises(ValueError, match="threshold for depth 1 1.5"):
        hedgerow.Decoder(DEMO / "taxonomy.csv", thresholds=[1.5])
    with pytest.raises(ValueError, match="rule: expected cumulative or conditional"):
        hedgerow.Decoder(DEMO / "taxonomy.csv", rule="greedy")
    with pytest.raises(TypeError, match="unexpected keyword argument `threshold`"):
        hedgerow.Decoder(DEMO / "taxonomy.csv", threshold=0.5)


def test_an_empty_batch_decodes_to_empty_arrays():
    dec = hedgerow.Decoder(DEMO / "taxonomy.csv")
    out = dec.decode(np.zeros((0, len(dec.node_ids)), dtype="float32"), threads=4)
    assert [len(v) for v in out.values()] == [0, 0, 0]


def test_the_package_ships_its_type_stubs_and_docstrings():
    from pathlib import Path

    folder = Path(hedgerow.__file__).parent
    assert (folder / "py.typed").exists()
    stubs = (folder / "__init__.pyi").read_text()
    for name in ["class Decoder", "def decode", "class Tally", "def evaluate", "def tally"]:
        assert name in stubs, name
    assert "-2 when the row abstained" in hedgerow.Decoder.decode.__doc__
    assert "metrics" in hedgerow.Tally.__doc__ and hedgerow.evaluate.__doc__
