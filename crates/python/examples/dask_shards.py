"""A batch spread over Dask workers: decode each .npy shard with a threshold profile, tally it
against its labels, add the tallies up, and check the result against one process.

    python crates/python/examples/dask_shards.py --profile PROFILE.json [--scheduler ADDRESS]

Without --scheduler a LocalCluster of two worker processes is started. The taxonomy and the
profile travel to the workers as bytes, so the workers need no shared files beyond the shards
(on a real cluster: shards on storage every worker reads).
"""

import argparse
import sys
from pathlib import Path

import numpy as np

import hedgerow

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "demo-data"


def write_shards(out: Path, shards: int):
    """The demo batch cut into `shards` uneven .npy shards (logits, objectness, labels)."""
    logits = np.load(DEMO / "logits.npy")
    objectness = np.load(DEMO / "objectness.npy")
    labels = np.array([l.split(",", 1)[1] for l in (DEMO / "labels.csv").read_text().splitlines()[1:]])
    cuts = np.linspace(0, len(logits), shards + 1).astype(int)
    cuts[1:-1] += np.arange(1, shards) * 37 % 500  # uneven
    out.mkdir(parents=True, exist_ok=True)
    paths = []
    for i, (a, b) in enumerate(zip(cuts, cuts[1:])):
        shard = out / f"shard-{i:02}"
        np.save(f"{shard}-logits.npy", logits[a:b])
        np.save(f"{shard}-objectness.npy", objectness[a:b])
        np.save(f"{shard}-labels.npy", labels[a:b])
        paths.append(str(shard))
    return paths


def decode_shard(taxonomy: bytes, profile: bytes, shard: str):
    dec = hedgerow.Decoder(taxonomy, profile)       # built on the worker, from bytes
    logits = np.load(f"{shard}-logits.npy", mmap_mode="r")
    objectness = np.load(f"{shard}-objectness.npy")
    labels = np.load(f"{shard}-labels.npy")
    return dec.decode(logits, objectness), dec.tally(logits, labels, objectness)


def run(client, taxonomy: bytes, profile: bytes, shards):
    futures = client.map(decode_shard, [taxonomy] * len(shards), [profile] * len(shards), shards)
    results = client.gather(futures)
    decoded = {k: np.concatenate([d[k] for d, _ in results]) for k in results[0][0]}
    total = sum(t for _, t in results)
    return decoded, total


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--profile", required=True)
    parser.add_argument("--shards", type=int, default=8)
    parser.add_argument("--workdir", default=str(ROOT / "target" / "dask-shards"))
    parser.add_argument("--scheduler", help="address of a running scheduler (tcp://HOST:8786)")
    args = parser.parse_args(argv)

    from dask.distributed import Client, LocalCluster

    taxonomy = (DEMO / "taxonomy.csv").read_bytes()
    profile = Path(args.profile).read_bytes()
    shards = write_shards(Path(args.workdir), args.shards)
    if args.scheduler:
        client = Client(args.scheduler)
        cluster = None
    else:
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                               dashboard_address=None)
        client = Client(cluster)
    try:
        workers = len(client.scheduler_info()["workers"])
        decoded, total = run(client, taxonomy, profile, shards)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()

    # The same batch in this one process.
    dec = hedgerow.Decoder(taxonomy, profile)
    logits = np.load(DEMO / "logits.npy")
    objectness = np.load(DEMO / "objectness.npy")
    whole = dec.decode(logits, objectness)
    for k in whole:
        assert np.array_equal(decoded[k], whole[k]), k
    metrics = dec.evaluate(logits, DEMO / "labels.csv", objectness)
    assert total.metrics() == metrics, "the shards' tallies differ from the whole batch"
    print(f"{len(shards)} shards on {workers} workers: {total.rows} rows decoded as in one "
          f"process; precision {metrics['precision']:.4f}, specificity "
          f"{metrics['specificity']:.4f}, equal to the single-process metrics")
    return 0


if __name__ == "__main__":
    sys.exit(main())
