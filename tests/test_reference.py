"""The reference anatomy table against its sources."""

from __future__ import annotations

import pytest

from vascplan.refdata.anatomy import ROOT_ID, load_body_segments, load_reference, suggest_segment

# Drillis and Contini 1966, as tabulated in Winter, Biomechanics and Motor Control of Human
# Movement, 4th ed., 2009, Fig. 4.1 (values as in the team's shared REFERENCES.md, seen
# second-hand): segment lengths as fractions of height H.
WINTER_FIG_4_1_LENGTHS = {
    "upper_arm": 0.186,
    "forearm": 0.146,
    "hand": 0.108,
    "thigh": 0.245,
    "leg": 0.246,
    "foot": 0.152,
}
# The same figure's heights above the floor, as fractions of H.
WINTER_FIG_4_1_HEIGHTS = {
    "shoulder": 0.818,
    "elbow": 0.630,
    "wrist": 0.485,
    "greater_trochanter": 0.530,
    "knee": 0.285,
    "ankle": 0.039,
}

MIDLINE = ["AO-ASC", "AO-ARCH", "AO-DESC", "AO-SUPRA", "AO-INFRA", "BCT"]
PAIRED = [
    "SCA",
    "AXA",
    "BRA",
    "RAD",
    "ULN",
    "CIA",
    "EIA",
    "IIA",
    "CFA",
    "PFA",
    "SFA",
    "POP",
    "TPT",
    "ATA",
    "PTA",
    "PER",
    "DPA",
    "PLA",
]


def test_body_fractions_are_winter_fig_4_1():
    body = load_body_segments()
    for name, fraction in WINTER_FIG_4_1_LENGTHS.items():
        assert body[name] == fraction, name  # tabulated to 3 decimals: exact


def test_trunk_is_shoulder_minus_trochanter_height():
    # Winter 2009 Fig 4.1: 0.818 - 0.530; the table gives 3 decimals.
    h = WINTER_FIG_4_1_HEIGHTS
    assert load_body_segments()["trunk"] == pytest.approx(
        h["shoulder"] - h["greater_trochanter"], abs=5e-4
    )


@pytest.mark.parametrize(
    ("segment", "upper", "lower", "tol"),
    [
        # Thigh = trochanter - knee height and leg = knee - ankle height in the same figure;
        # arm segments agree to the figure's rounding (0.002).
        ("thigh", "greater_trochanter", "knee", 5e-4),
        ("leg", "knee", "ankle", 5e-4),
        ("upper_arm", "shoulder", "elbow", 2.5e-3),
        ("forearm", "elbow", "wrist", 1.5e-3),
    ],
)
def test_winter_lengths_agree_with_heights(segment, upper, lower, tol):
    h = WINTER_FIG_4_1_HEIGHTS
    assert load_body_segments()[segment] == pytest.approx(h[upper] - h[lower], abs=tol)


def test_table_has_every_segment_both_sides():
    ids = set(load_reference())
    expected = set(MIDLINE) | {f"{s}-{p}" for s in "LR" for p in PAIRED}
    assert ids == expected


def test_parents_as_in_the_anatomy():
    ref = load_reference()
    parent = {k: v.parent for k, v in ref.items()}
    assert parent[ROOT_ID] is None
    assert parent["R-SCA"] == "BCT" and parent["L-SCA"] == "AO-ARCH" and parent["BCT"] == "AO-ARCH"
    for s in "LR":
        p = f"{s}-"
        assert parent[p + "RAD"] == parent[p + "ULN"] == p + "BRA"
        assert parent[p + "PFA"] == parent[p + "SFA"] == p + "CFA"
        assert parent[p + "EIA"] == parent[p + "IIA"] == p + "CIA"
        assert parent[p + "CIA"] == "AO-INFRA"
        assert parent[p + "TPT"] == parent[p + "ATA"] == p + "POP"
        assert parent[p + "PTA"] == parent[p + "PER"] == p + "TPT"
        assert parent[p + "DPA"] == p + "ATA"
        assert parent[p + "PLA"] == p + "PTA" and ref[p + "PLA"].loop_to == p + "DPA"


def test_every_row_has_sources_and_a_sane_range():
    for r in load_reference().values():
        assert r.length_source and r.diameter_source and r.range_source, r.id
        for sex in ("female", "male", "unspecified"):
            assert r.diameter_min_mm < r.diameter_mean_mm(sex) < r.diameter_max_mm, r.id


def test_published_diameters():
    ref = load_reference()
    # Kim et al., PLoS One 2022, doi 10.1371/journal.pone.0268077: infrarenal aorta
    # men 18.4 +/- 1.8, women 15.9 +/- 1.7 mm.
    a = ref["AO-INFRA"]
    assert (a.diameter_male_mean_mm, a.diameter_male_sd_mm) == (18.4, 1.8)
    assert (a.diameter_female_mean_mm, a.diameter_female_sd_mm) == (15.9, 1.7)
    # Wahood et al., J NeuroIntervent Surg 2022: radial men 2.68 +/- 0.24, women 2.27 +/- 0.27.
    r = ref["L-RAD"]
    assert (r.diameter_male_mean_mm, r.diameter_male_sd_mm) == (2.68, 0.24)
    assert (r.diameter_female_mean_mm, r.diameter_female_sd_mm) == (2.27, 0.27)


def test_lengths_for_height_inside_recalled_ranges():
    # From memory (REFERENCES.md): SFA 25-30, popliteal 15-20, abdominal aorta 12-15,
    # descending thoracic 20-25 cm, for an adult of about 170 cm.
    ref = load_reference()
    at = {k: v.length_for_height_cm(170) for k, v in ref.items()}
    assert 25 <= at["L-SFA"] <= 30
    assert 15 <= at["L-POP"] <= 20
    assert 12 <= at["AO-SUPRA"] + at["AO-INFRA"] <= 15
    assert 20 <= at["AO-DESC"] <= 25
    # Thrush & Hartshorne: common iliac 3.5-12, external iliac 6-12 cm.
    assert 3.5 <= at["L-CIA"] <= 12 and 6 <= at["L-EIA"] <= 12


def test_body_rule_scales_with_height():
    sfa = load_reference()["R-SFA"]
    assert sfa.length_for_height_cm(200) == pytest.approx(2 * sfa.length_for_height_cm(100))


def test_suggestions():
    assert suggest_segment("r-cfa") == " (did you mean 'R-CFA'?)"
    assert suggest_segment("POP") == " (did you mean 'L-POP' or 'R-POP'?)"
    assert suggest_segment("zzzzzz") == ""


def test_malformed_table_names_line_and_column(tmp_path):
    import shutil

    from vascplan.errors import InputError
    from vascplan.paths import data_dir

    folder = tmp_path / "data"
    shutil.copytree(data_dir() / "anatomy", folder / "anatomy")
    table = folder / "anatomy" / "segments.csv"
    lines = table.read_text().splitlines()
    lines[3] = lines[3].replace(
        "AO-DESC,descending thoracic aorta,AO-ARCH,", "AO-DESC,descending thoracic aorta,AO-ARC,"
    )
    table.write_text("\n".join(lines) + "\n")
    with pytest.raises(InputError) as exc:
        load_reference(str(folder))
    assert str(exc.value) == f"{table}: line 4.parent: parent 'AO-ARC' must be an earlier row's id"


def test_more_published_diameters():
    ref = load_reference()
    # Sexes split for the common iliac, women smaller: CT lumen women 8.8, men 11.8 mm (Tran
    # et al., Ann Vasc Surg 2017), pooled 9.50 +/- 1.53 mm (Lunn-Collier et al., Transl Res
    # Anat 2024): the table takes 9.5 and 11.0 mm, SD 1.5 mm.
    cia = ref["R-CIA"]
    assert (cia.diameter_female_mean_mm, cia.diameter_male_mean_mm) == (9.5, 11.0)
    assert cia.diameter_female_sd_mm == cia.diameter_male_sd_mm == 1.5
    # Axillary minimal lumen 6.0 +/- 1.1 mm (Catheter Cardiovasc Interv 2018;91:150).
    assert (ref["R-AXA"].diameter_male_mean_mm, ref["R-AXA"].diameter_male_sd_mm) == (6.0, 1.1)
    # The groin is no longer healthy volunteers' outer diameter (about 9.8 mm in men, 8.2 mm
    # in women, Sandgren et al., J Vasc Surg 1999;29:503, values from memory) but the
    # patients' CT minimal lumen (Chiam et al., Int J Cardiol 2013): well below it.
    assert (
        ref["L-CFA"].diameter_male_mean_mm < 9.8 - 2
        and ref["L-CFA"].diameter_female_mean_mm < 8.2 - 1.5
    )


def test_unknown_diameter_kind_is_refused(tmp_path):
    import shutil

    from vascplan.errors import InputError
    from vascplan.paths import data_dir

    folder = tmp_path / "data"
    shutil.copytree(data_dir() / "anatomy", folder / "anatomy")
    table = folder / "anatomy" / "segments.csv"
    text = table.read_text()
    table.write_text(text.replace(",mld-patients,", ",volunteers,", 1))
    line = next(n for n, row in enumerate(text.splitlines(), start=1) if ",mld-patients," in row)
    with pytest.raises(InputError) as exc:
        load_reference(str(folder))
    assert str(exc.value) == (
        f"{table}: line {line}.diameter_kind: must be one of "
        "mld-patients, lumen-patients, population, recalled"
    )


# Men's 95th-percentile upper limits by MR angiography (Lorbeer et al., PLoS One
# 2018;13:e0197559): a male reference mean must lie below them, and the plausible range
# must not refuse a diameter at that limit.
LORBEER_2018_MEN_P95_MM = {
    "CIA": 11.8,
    "EIA": 10.3,
    "CFA": 10.2,  # "proximal femoral"
    "SFA": 7.7,  # "distal femoral"; the SFA mean is taken over the whole artery
    "POP": 6.9,
    "ATA": 4.2,
    "PTA": 3.8,
    "PER": 4.0,
}


@pytest.mark.parametrize(("seg", "p95_mm"), sorted(LORBEER_2018_MEN_P95_MM.items()))
def test_male_means_below_lorbeer_95th_centile(seg, p95_mm):
    ref = load_reference()
    for side in "LR":
        r = ref[f"{side}-{seg}"]
        assert r.diameter_male_mean_mm < p95_mm
        assert r.diameter_min_mm < p95_mm <= r.diameter_max_mm


def test_plausible_range_holds_three_sd_either_side():
    # Mean +/- 3 SD covers 99.7% of a normal distribution: a normal patient's measured
    # diameter must never be refused as implausible.
    for r in load_reference().values():
        for sex in ("female", "male"):
            mean, sd = r.diameter_mean_mm(sex), r.diameter_sd_mm(sex)
            assert r.diameter_min_mm <= mean - 3 * sd + 1e-9, (r.id, sex)
            assert mean + 3 * sd <= r.diameter_max_mm + 1e-9, (r.id, sex)


def test_suggestions_for_plain_names_and_ties():
    assert suggest_segment("radial") == " (did you mean 'L-RAD' or 'R-RAD'?)"
    assert suggest_segment("L-ATX") == " (did you mean 'L-ATA' or 'L-AXA'?)"
    assert suggest_segment("R-POPL") == " (did you mean 'R-POP'?)"


@pytest.mark.parametrize("vessel", ["CFA", "EIA", "SFA", "AXA", "SCA"])
@pytest.mark.parametrize("side", ["L", "R"])
def test_ward_reference_reads_the_one_anatomy_table(vessel, side):
    # One reference anatomy: the ward's access-vessel reference is the segment row of that
    # side in data/anatomy/segments.csv, with its source, for each sex.
    from vascplan.surveillance.risk import reference_diameter

    row = load_reference()[f"{side}-{vessel}"]
    for sex in ("female", "male"):
        ref, note = reference_diameter(vessel, sex, side=side)
        assert ref.diameter_mm == row.diameter_mean_mm(sex)
        assert ref.source == row.diameter_source and row.diameter_source in note
    # Sex not given: the women's value, never larger than the men's (cautious).
    ref, _ = reference_diameter(vessel, "unspecified", side=side)
    assert ref.diameter_mm == row.diameter_female_mean_mm <= row.diameter_male_mean_mm


def test_no_second_diameter_table():
    from vascplan.paths import data_dir

    assert not (data_dir() / "surveillance" / "reference_diameters.csv").exists()
