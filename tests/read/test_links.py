"""Links table and the one-line error contract (project conventions, no outside source needed)."""
import pytest

from diag.errors import InputError
from diag.links import read_links_table
from diag.read.hop_match import assign_hops


def test_links_table_reads_required_and_optional(tmp_path):
    path = tmp_path / "links.csv"
    path.write_text("link_id,frequency_ghz,length_km,polarization,threshold_dbm,r001_mmh\n"
                    "hop-a,23,10,H,-70,42\nhop-b,7.5,32,vertical,-78,\n")
    links = read_links_table(path)
    assert [link.link_id for link in links] == ["hop-a", "hop-b"]
    assert links[0].r001_mmh == 42.0 and links[1].r001_mmh is None
    assert links[1].polarization == "V"
    assert "r001_mmh" in links[1].missing_optional()


@pytest.mark.parametrize("body, fragment", [
    ("link_id,frequency_ghz,length_km,polarization\nx,23,10,H\n", "threshold_dbm"),
    ("link_id,frequency_ghz,length_km,polarization,threshold_dbm\nx,abc,10,H,-70\n", "not a number"),
    ("link_id,frequency_ghz,length_km,polarization,threshold_dbm\nx,23000,10,H,-70\n", "plausible range"),
    ("link_id,frequency_ghz,length_km,polarization,threshold_dbm\nx,23,10,Q,-70\n", "polarization"),
    ("", "empty"),
])
def test_bad_links_table_is_one_line_error(tmp_path, body, fragment):
    path = tmp_path / "links.csv"
    path.write_text(body)
    with pytest.raises(InputError, match=fragment) as info:
        read_links_table(path)
    assert "\n" not in info.value.one_line()


def test_match_link_by_id_file_name_and_single_row(tmp_path):
    path = tmp_path / "links.csv"
    path.write_text("link_id,frequency_ghz,length_km,polarization,threshold_dbm\n"
                    "hop-a,23,10,H,-70\nhop-ab,23,10,H,-70\n")
    links = read_links_table(path)
    assert assign_hops(["hop-a"], links).hops == {"hop-a": "hop-a"}
    assert assign_hops(["hop-ab_week"], links, file_name="/x/hop-ab_week.csv", names_hop=False).hops == {
        "hop-ab_week": "hop-ab"}
    with pytest.raises(InputError):
        assign_hops(["nope"], links)
    one = assign_hops(["nope"], links[:1])
    assert one.hops == {"nope": "hop-a"} and "nope" in one.warnings[0] and "hop-a" in one.warnings[0]
