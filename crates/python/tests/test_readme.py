"""The README's "From Python" section: its first snippet runs on the demo data (after the
README's own `hedgerow profile` command wrote the profile it reads), and its cluster snippet
holds the very `decode_shard` the tested Dask example runs."""

import ast
import re
import shlex

from conftest import ROOT, run_cli

PREFIX = "cargo run --release -p hedgerow-cli -- "


def section() -> str:
    text = (ROOT / "README.md").read_text()
    start = text.index("## From Python")
    end = text.index("\n## ", start + 1)
    return text[start:end]


def snippets() -> list:
    return re.findall(r"```python\n(.*?)```", section(), re.S)


def test_the_readme_snippet_runs_on_the_demo_data(monkeypatch):
    monkeypatch.chdir(ROOT)  # the snippet names the demo files from the repository root
    readme = (ROOT / "README.md").read_text()
    (command,) = [line.strip()[len(PREFIX):] for line in readme.splitlines()
                  if line.strip().startswith(PREFIX + "profile ") and "line-profile.json" in line]
    run_cli(*shlex.split(command))
    first = snippets()[0]
    assert "hedgerow.Decoder(" in first and "assert (first + second).metrics() == metrics" in first
    exec(compile(first, "README.md", "exec"), {"__name__": "readme"})


def function(source: str, name: str) -> str:
    tree = ast.parse(source)
    (node,) = [n for n in tree.body if isinstance(n, ast.FunctionDef) and n.name == name]
    return ast.get_source_segment(source, node)


def test_the_cluster_snippet_is_the_example_pointed_at_a_scheduler():
    cluster = snippets()[1]
    assert 'Client("tcp://scheduler:8786")' in cluster
    example = (ROOT / "crates/python/examples/dask_shards.py").read_text()
    assert function(cluster, "decode_shard") == function(example, "decode_shard")
    assert "pip install crates/python" in section()
