"""kgkit slice --engine spark, in Spark local mode: the same bytes as the local engine."""

from __future__ import annotations

import bz2
import gzip
import os
import shutil
import sys

import pytest
from conftest import DATA

from kgkit.ingest import make_slice
from kgkit.ingest.slice_dump import slice_dump

pytest.importorskip("pyspark", reason="the spark extra is not installed")
if shutil.which("java") is None:
    pytest.skip("Spark needs Java, not found on PATH", allow_module_level=True)

MESSY = DATA / "ingest-messy" / "messy.nt"
SKOS = "http://www.w3.org/2004/02/skos/core#"
E = "http://example.org/e/"


@pytest.fixture(scope="module")
def spark():
    """One Spark session (local mode, loopback only) for the module; the engine reuses it."""
    from pyspark.sql import SparkSession

    before = os.environ.get("PYSPARK_PYTHON")
    os.environ["PYSPARK_PYTHON"] = sys.executable  # the workers need kgkit's interpreter
    session = (
        SparkSession.builder.master("local[2]")
        .appName("kgkit-test")
        .config("spark.ui.enabled", "false")
        .config("spark.driver.bindAddress", "127.0.0.1")
        .config("spark.driver.host", "127.0.0.1")
        .getOrCreate()
    )
    session.sparkContext.setLogLevel("ERROR")
    yield session
    session.stop()
    if before is None:
        os.environ.pop("PYSPARK_PYTHON", None)
    else:
        os.environ["PYSPARK_PYTHON"] = before


def _both(workspace, tmp_path, src, **kw):
    outs = []
    for engine in ("local", "spark"):
        out = tmp_path / f"{engine}.nt"
        s = slice_dump(workspace, [str(src)], out, engine=engine, jobs=2, **kw)
        rej = out.with_name(out.name + ".rejects.txt")
        outs.append(
            (
                out.read_bytes(),
                {k: v for k, v in s.to_dict().items() if k not in ("seconds", "output", "rejects")},
                rej.read_text(encoding="utf-8") if rej.exists() else None,
            )
        )
    return outs


def test_spark_gives_the_local_output_on_the_messy_dump(spark, workspace, tmp_path):
    src = tmp_path / "messy.nt.gz"
    src.write_bytes(gzip.compress(MESSY.read_bytes()))
    sl = make_slice(workspace, scope="profile", literal_languages=["en", "de"])
    local, remote = _both(workspace, tmp_path, src, slice=sl, on_error="skip")
    assert local == remote
    assert local[1]["rejected"] == 5 and local[1]["written"] == 10


def test_spark_gives_the_local_output_with_roots(spark, workspace, tmp_path):
    from test_ingest_slice import HIERARCHY

    src = tmp_path / "h.nt.bz2"
    src.write_bytes(bz2.compress(HIERARCHY.encode()))
    sl = make_slice(workspace, scope="profile")
    local, remote = _both(workspace, tmp_path, src, slice=sl, roots=[f"{E}a"])
    assert local == remote
    assert local[1]["entities"] == 4 and local[1]["written"] == 6


def test_spark_refuses_what_hadoop_would_misread(spark, workspace, tmp_path):
    from kgkit.errors import KgkitError

    src = tmp_path / "x.dat"
    src.write_bytes(gzip.compress(MESSY.read_bytes()))
    sl = make_slice(workspace, scope="profile")
    with pytest.raises(KgkitError, match="gzip data under a name Spark reads as none"):
        slice_dump(workspace, [str(src)], tmp_path / "o.nt", sl, format="nt", engine="spark")


def test_cli_slice_engine_spark(spark, kgkit, tmp_path):
    src = tmp_path / "messy.nt.bz2"
    src.write_bytes(bz2.compress(MESSY.read_bytes()))
    outs = {}
    for engine in ("local", "spark"):
        out = tmp_path / f"{engine}.nt"
        r = kgkit(
            "slice",
            str(src),
            "-o",
            str(out),
            "--engine",
            engine,
            "--on-error",
            "skip",
            "--json",
            "--jobs",
            "2",
        )
        assert r.exit_code == 0, r.output
        outs[engine] = out.read_bytes()
    assert outs["local"] == outs["spark"]


def test_cli_slice_in_pieces(spark, kgkit, tmp_path):
    src = tmp_path / "messy.nt.bz2"
    src.write_bytes(bz2.compress(MESSY.read_bytes()))
    one, folder = tmp_path / "one.nt", tmp_path / "pieces"
    r = kgkit("slice", str(src), "-o", str(one), "--on-error", "skip", "--jobs", "2")
    assert r.exit_code == 0, r.output
    r = kgkit(
        "slice", str(src), "-o", str(folder), "--on-error", "skip", "--engine", "spark",
        "--in-pieces", "--json",
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    names = sorted(p.name for p in folder.iterdir())
    assert names and names[0] == "piece-00000.nt"
    assert b"".join((folder / n).read_bytes() for n in names) == one.read_bytes()


def test_cli_in_pieces_needs_spark(kgkit, tmp_path):
    r = kgkit("slice", str(MESSY), "-o", str(tmp_path / "p"), "--in-pieces")
    assert r.exit_code != 0
    assert "--in-pieces: needs the spark engine" in r.output, r.output
    assert not (tmp_path / "p").exists()
