"""Shared by the validation-family tests: write a world's logs and read each back with diag's reader."""
from __future__ import annotations

from diag import schema as S

STATS_OF_SHAPE = {"15min_mam": {S.MIN, S.AVG, S.MAX}, "15min_mm": {S.MIN, S.MAX}}


def read_back(family, world, tmp_path):
    """Write ``world`` with ``family.write_world``, check the links table lists its hops in order, and yield
    (shape, truth, read result, report dict) for every log, after the checks every family's logs must pass: the
    hop's channels, the statistics each shape carries, and every row read kept."""
    from diag.links import read_links_table
    from diag.read.ingest import read_log

    files = family.write_world(world, tmp_path)
    links = read_links_table(tmp_path / "links.csv")
    assert [link.link_id for link in links] == [t.hop.link_id for t in world.hops]
    for shape, paths in files.items():
        for path, truth in zip(paths, world.hops):
            read = read_log(str(path))
            rep = read.report.to_dict()
            assert set(read.table[S.CHANNEL].astype(str)) == set(truth.hop.channels)
            assert set(read.table[S.STAT].astype(str)) == STATS_OF_SHAPE.get(shape, {S.SAMPLE})
            assert rep["rows_read"] == rep["rows_kept"] > 0
            yield shape, truth, read, rep
