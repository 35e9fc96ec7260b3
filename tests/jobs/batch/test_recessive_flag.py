"""The loci file's optional ``mode`` column: recessive loci are flagged, since every
s_het assumes h = 1/2 (common practice: q ~ mu/(h s) holds only with selected
heterozygotes; a recessive's balance is q ~ sqrt(mu/s))."""

import csv

from conftest import call_qhat

from infer.jobs.batch.summary import FLAGS, RECESSIVE_FLAG

LOCI = """locus,observed,sampled,mu,mode
GENE_A,3,20000,1e-8,dominant
GENE_B,40,20000,1e-8,recessive
GENE_C,1,20000,1e-8,
"""


def test_recessive_loci_carry_the_flag(tmp_path, capsys):
    path = tmp_path / "loci.csv"
    path.write_text(LOCI, encoding="utf-8")
    status, _, err = call_qhat(["batch", path, "--out", tmp_path / "out", "--quiet"], capsys)
    assert status == 0, err
    with open(tmp_path / "out" / "loci.csv", newline="", encoding="utf-8") as handle:
        rows = {row["locus"]: row["flags"].split(";") for row in csv.DictReader(handle)}
    name, meaning = FLAGS[RECESSIVE_FLAG]
    assert name in rows["GENE_B"]
    assert name not in rows["GENE_A"] and name not in rows["GENE_C"]
    assert "h = 1/2" in meaning


def test_a_mode_that_is_neither_is_refused(tmp_path, capsys):
    path = tmp_path / "loci.csv"
    path.write_text(LOCI.replace("recessive", "codominant"), encoding="utf-8")
    status, _, err = call_qhat(["batch", path, "--out", tmp_path / "out"], capsys)
    assert status == 2 and "line 3, column mode" in err and "codominant" in err, err
    assert not (tmp_path / "out").exists()
