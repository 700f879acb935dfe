"""`hedgerow.evaluate` against `hedgerow evaluate --json`, and tallies: parts of a batch
tallied apart add up to exactly the whole batch's metrics."""

import pickle

import numpy as np
import pytest

import hedgerow
from conftest import DEMO, cli_metrics, demo_inputs

TAXONOMY = DEMO / "taxonomy.csv"


@pytest.mark.parametrize("profile", ["objectness", "nodes"])
def test_evaluate_equals_the_cli_json(demo, profiles, profile):
    expected = cli_metrics(*demo_inputs(), "--profile", profiles[profile])
    got = hedgerow.evaluate(taxonomy=TAXONOMY, logits=demo["logits"], labels=DEMO / "labels.csv",
                            objectness=demo["objectness"], profile=profiles[profile])
    assert got == expected
    # Labels as ids, as column indices, and as the file; objectness as its file.
    ids = hedgerow.Decoder(TAXONOMY).node_ids
    column = np.array([ids.index(g) if g else -1 for g in demo["labels"]])
    for labels, objectness in [(demo["labels"], DEMO / "objectness.npy"),
                               (column, demo["objectness"]),
                               (list(demo["labels"]), demo["objectness"].astype("float64"))]:
        assert hedgerow.evaluate(taxonomy=TAXONOMY, logits=demo["logits"], labels=labels,
                                 objectness=objectness, profile=profiles[profile],
                                 threads=2) == expected


def test_keyword_settings_equal_the_cli_flags(demo):
    flags = ["--rule", "conditional", "--thresholds", "0.8,0.4", "--object-threshold", "0.3",
             "--temperatures", "1.5,0.8", "--unverifiable", "penalize",
             "--node-threshold", "glass=0.1"]
    expected = cli_metrics(*demo_inputs(), *flags)
    got = hedgerow.evaluate(taxonomy=TAXONOMY, logits=np.asarray(demo["logits"], order="F"),
                            labels=demo["labels"], objectness=demo["objectness"],
                            rule="conditional", thresholds=[0.8, 0.4], object_threshold=0.3,
                            temperatures=[1.5, 0.8], unverifiable="penalize",
                            node_thresholds={"glass": 0.1})
    assert got == expected


CUTS = [0, 1, 1, 2503, 6000, 9999, 12345, 17777, 20000]


@pytest.mark.parametrize("profile", ["objectness", "nodes"])
def test_tallies_of_parts_add_up_to_the_whole(demo, profiles, profile):
    dec = hedgerow.Decoder(TAXONOMY, profiles[profile])
    whole = dec.evaluate(demo["logits"], demo["labels"], demo["objectness"])
    parts = [dec.tally(demo["logits"][a:b], demo["labels"][a:b], demo["objectness"][a:b])
             for a, b in zip(CUTS, CUTS[1:])]
    assert sum(p.rows for p in parts) == 20000
    total = parts[0]
    for p in parts[1:]:
        total = total + p
    assert total.metrics() == whole
    assert sum(reversed(parts)).metrics() == whole
    # Pickled (as Dask sends them between processes) and back.
    back = pickle.loads(pickle.dumps(total))
    assert back == total and back.metrics() == whole
    assert hedgerow.tally(taxonomy=TAXONOMY, logits=demo["logits"], labels=demo["labels"],
                          objectness=demo["objectness"], profile=profiles[profile]) == total


def test_tallies_of_other_settings_do_not_add(demo, profiles):
    a = hedgerow.tally(taxonomy=TAXONOMY, logits=demo["logits"][:100], labels=demo["labels"][:100])
    b = hedgerow.tally(taxonomy=TAXONOMY, logits=demo["logits"][:100], labels=demo["labels"][:100],
                       thresholds=0.7)
    with pytest.raises(ValueError, match="different thresholds"):
        a + b
    with pytest.raises(TypeError):
        a + 1


def test_bad_labels_are_named_by_row(demo):
    logits = demo["logits"][:5]
    cases = [
        (["pet", "nothing-like-it", "", "", ""], "labels, row 1: label `nothing-like-it` is not an id"),
        ([0, 1, 2, 999, -1], "labels, row 3: label index 999"),
        (["pet"] * 4, "labels: 4 rows, but logits has 5 rows"),
        (np.zeros(5, dtype="float32"), "labels: dtype `float32`"),
    ]
    for labels, message in cases:
        with pytest.raises(ValueError) as e:
            hedgerow.evaluate(taxonomy=TAXONOMY, logits=logits, labels=labels)
        assert message in str(e.value), (message, str(e.value))
