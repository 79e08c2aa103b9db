"""qamsight io bindings: the CLI's JSON/CSV, baselines, atomic files, input errors."""
import json
import os

import pytest

import qamsight as qs
from conftest import counts_of

ARGS = ["--mod", "qpsk,8psk", "--ebn0", "5,7", "--max-bits", "5e5", "--seed", "9"]


def sweep():
    return qs.sweep(["qpsk", "8psk"], eb_n0_db=[5, 7], max_bits=5e5, seed=9)


def without_seconds(text):
    doc = json.loads(text)
    for p in doc["points"]:
        p.pop("seconds")
    return doc


def test_json_and_csv_equal_the_cli_files_but_for_timing(cli, tmp_path):
    doc, path = cli.sweep_json(*ARGS)
    res = sweep()
    assert without_seconds(res.to_json()) == without_seconds(open(path).read())
    assert res.to_dict() == json.loads(res.to_json()) == json.loads(qs.sweep_to_json(res))
    csv = tmp_path / "c.csv"
    cli.run("sweep", *ARGS, "--csv", csv, "--quiet")
    cli_lines = open(csv).read().splitlines()
    mine = res.to_csv().splitlines()
    assert mine[0] == cli_lines[0] and "seconds" in mine[0]
    col = mine[0].split(",").index("seconds")
    strip = lambda line: [v for i, v in enumerate(line.split(",")) if i != col]
    assert [strip(x) for x in mine[1:]] == [strip(x) for x in cli_lines[1:]]
    assert res.to_csv() == qs.sweep_to_csv(res)


def test_baseline_reader_reads_cli_and_own_files(cli, tmp_path):
    _, path = cli.sweep_json(*ARGS)
    base = qs.load_sweep_json(path)
    assert counts_of(base.points) == counts_of(sweep().points)
    own = tmp_path / "own.json"
    qs.write_text_file_atomic(str(own), sweep().to_json())
    assert counts_of(qs.load_sweep_json(str(own)).points) == counts_of(base.points)
    again = qs.sweep_from_json(qs.read_text_file(str(own)), "own")
    assert counts_of(again.points) == counts_of(base.points)


def test_input_errors_name_file_and_key(tmp_path):
    with pytest.raises(qs.InputError, match="nonexistent"):
        qs.load_sweep_json(str(tmp_path / "nonexistent.json"))
    bad = tmp_path / "bad.json"
    for content, needle in [("{not json", "not valid JSON"), ('{"points": 3}', "'points'"),
                            ('{"points": [{"modulation": "qpsk"}]}', "points[0].eb_n0_db")]:
        bad.write_text(content)
        with pytest.raises(ValueError) as info:
            qs.load_sweep_json(str(bad))
        assert needle in str(info.value) and str(bad) in str(info.value)
    with pytest.raises(qs.InputError, match="source-name"):
        qs.sweep_from_json("[]", "source-name")
    with pytest.raises(qs.InputError, match="cannot write"):
        qs.write_text_file_atomic(str(tmp_path / "no" / "dir" / "x"), "text")


def test_to_dataframe_needs_pandas():
    res = qs.sweep("qpsk", eb_n0_db=[5, 6], max_bits=1e5)
    try:
        import pandas  # noqa: F401
    except ImportError:
        with pytest.raises(ImportError, match="pandas"):
            res.to_dataframe()
    else:
        df = res.to_dataframe()
        assert list(df["bits"]) == [p.bits for p in res.points]


def test_atomic_write_leaves_no_temporary(tmp_path):
    target = tmp_path / "out.txt"
    qs.write_text_file_atomic(str(target), "hello\n")
    assert qs.read_text_file(str(target)) == "hello\n"
    assert os.listdir(tmp_path) == ["out.txt"]
