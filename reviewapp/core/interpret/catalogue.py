"""The statement catalogue: every statement the engine makes and a reader may pick.

Each entry has this program's own identifier (``code``: "<category>.<name>", words, never a
number), the trade term as the AHA/ACCF/HRS statement list writes it (``text``; Mason JW et
al., Circulation 2007;115:1325-1332), its category, the criteria in words (what the engine
checks, with the thresholds), and the published source. Entries with ``automatic=False`` are
for the reader only: the engine never states them (e.g. second-degree AV block, which needs
P waves the engine does not track beat by beat).

Categories, in the order a reading lists them: lead check (a warning about the recording),
rhythm, conduction, axis, chamber (hypertrophy, atrial abnormality, voltage), repolarization
and QT, ischemia and infarction, and other (the reader's own, and free text).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from reviewapp.core.interpret import sources as S
from reviewapp.core.interpret.sources import Source
from reviewapp.core.marks.model import FREE_TEXT_CODE
from reviewapp.core.measure.limb_consistency import MAX_RELATIVE_RESIDUAL

# The precordial-sequence check's threshold (interpret/lead_checks.py, which explains how it
# was set); here so that the catalogue's criterion text renders from the value applied.
SEQUENCE_GAIN = 0.2

CATEGORIES: tuple[tuple[str, str], ...] = (
    ("lead_check", "Lead check"),
    ("rhythm", "Rhythm"),
    ("conduction", "Conduction"),
    ("axis", "Axis"),
    ("chamber", "Chambers and voltage"),
    ("repolarization", "Repolarization and QT"),
    ("infarction", "Ischemia and infarction"),
    ("other", "Other"),
)
CATEGORY_NAMES: dict[str, str] = dict(CATEGORIES)
CATEGORY_ORDER: dict[str, int] = {c: i for i, (c, _) in enumerate(CATEGORIES)}
FREE_TEXT = FREE_TEXT_CODE


@dataclass(frozen=True)
class StatementDef:
    code: str
    text: str
    category: str
    criteria: str
    sources: tuple[Source, ...]
    keywords: tuple[str, ...] = ()
    automatic: bool = True

    @property
    def source(self) -> str:
        """The citations as the reader sees them, "; "-joined."""
        return "; ".join(s.citation for s in self.sources)


def _d(
    code: str,
    text: str,
    criteria: str,
    sources: Source | tuple[Source, ...],
    keywords: str = "",
    *,
    automatic: bool = True,
) -> StatementDef:
    cat = code.split(".", 1)[0]
    srcs = sources if isinstance(sources, tuple) else (sources,)
    return StatementDef(code, text, cat, criteria, srcs, tuple(keywords.split()), automatic)


# Criteria texts name every threshold the engine uses; the rules modules hold the numbers
# (with the same values; tests/interpret/test_catalogue.py checks each appears here).
ENTRIES: tuple[StatementDef, ...] = (
    # --- lead checks -------------------------------------------------------------------
    _d(
        "lead_check.limb_reversal",
        "limb lead reversal suspected (left and right arm)",
        "net QRS negative in I with its P or T negative, and aVR's net QRS, P or T positive "
        "(waves beyond 0.02 mV); dextrocardia looks the same",
        S.BATCHVAROV_2007,
        "electrode cable swap arm LA RA dextrocardia technical",
    ),
    _d(
        "lead_check.precordial_sequence",
        "precordial lead out of sequence",
        "swapping two chest leads makes each chest lead's QRS-T more like its neighbours' "
        f"(correlation along V1-V6 higher by more than {SEQUENCE_GAIN:g} in sum)",
        S.ENGINE,
        "electrode misplacement chest V1 V2 V3 V4 V5 V6 swap technical",
    ),
    _d(
        "lead_check.limb_inconsistent",
        "limb leads inconsistent",
        "the recorded limb leads break Einthoven's or Goldberger's relations (III = II - I, "
        "aVR = -(I + II)/2, aVL = (I - III)/2, aVF = (II + III)/2): a residual above "
        f"{100 * MAX_RELATIVE_RESIDUAL:.0f} % of the limb-lead signal (rms) in any of them: a "
        "limb lead's calibration or electrode is suspect; the frontal axes are then unreliable "
        "and the statements resting on them are not made",
        (S.EINTHOVEN_1913, S.GOLDBERGER_1942),
        "Einthoven Goldberger calibration gain electrode cable technical",
    ),
    # --- rhythm ------------------------------------------------------------------------
    _d(
        "rhythm.sinus",
        "sinus rhythm",
        "a P wave before every dominant QRS with a constant PR, upright in lead II (P axis "
        "between -30 and +150 deg); rate 50-100 bpm",
        (S.MASON_2007, S.KUSUMOTO_2019),
        "normal sinus NSR",
    ),
    _d(
        "rhythm.sinus_bradycardia",
        "sinus bradycardia",
        "sinus P waves (as for sinus rhythm); rate < 50 bpm",
        S.KUSUMOTO_2019,
        "slow brady",
    ),
    _d(
        "rhythm.sinus_tachycardia",
        "sinus tachycardia",
        "sinus P waves (as for sinus rhythm); rate > 100 bpm",
        S.MASON_2007,
        "fast tachy",
    ),
    _d(
        "rhythm.sinus_arrhythmia",
        "sinus arrhythmia",
        "sinus P waves; the longest and shortest cycles between consecutive dominant beats "
        "differ by more than 120 ms",
        S.CONVENTIONAL,
        "respiratory irregular sinus",
    ),
    _d(
        "rhythm.ectopic_atrial",
        "ectopic atrial rhythm",
        "a P wave before every dominant QRS with a constant PR, but inverted in lead II "
        "(P axis outside -30 to +150 deg)",
        S.MASON_2007,
        "low atrial coronary sinus left atrial",
    ),
    _d(
        "rhythm.junctional",
        "junctional rhythm",
        "no P wave before the QRS, regular ventricular rhythm, QRS < 120 ms, rate <= 100 bpm, "
        "no flutter waves",
        S.MASON_2007,
        "nodal AV junctional escape accelerated",
    ),
    _d(
        "rhythm.atrial_fibrillation",
        "atrial fibrillation",
        "no P waves (no wave keeps its PR from beat to beat) and an irregular ventricular "
        "rhythm (RR coefficient of variation > 10 %), without organised flutter waves",
        S.MASON_2007,
        "AF AFib fibrillation irregular",
    ),
    _d(
        "rhythm.atrial_flutter",
        "atrial flutter",
        "no P waves; after each beat's QRST is taken away, regular atrial waves at 240-340 per "
        "minute holding at least 43 % of the atrial activity's power (organisation >= 0.43)",
        (S.MASON_2007, S.SLOCUM_1985),
        "flutter sawtooth F waves",
    ),
    _d(
        "rhythm.paced_ventricular",
        "ventricular paced rhythm",
        "a ventricular pacing stimulus before more than half of the QRS complexes",
        S.MASON_2007,
        "pacemaker VVI pacing electronic",
    ),
    _d(
        "rhythm.paced_atrial",
        "atrial paced rhythm",
        "an atrial pacing stimulus 60-340 ms before the QRS in at least half of the beats "
        "(3 or more), no ventricular pacing",
        S.MASON_2007,
        "pacemaker AAI pacing electronic",
    ),
    _d(
        "rhythm.paced_dual",
        "atrial and ventricular paced rhythm (dual chamber)",
        "atrial stimuli before at least half of the beats (3 or more) and ventricular stimuli "
        "before more than half of the QRS complexes",
        S.MASON_2007,
        "pacemaker DDD AV sequential dual chamber pacing",
    ),
    _d(
        "rhythm.paced_complexes",
        "ventricular paced complexes",
        "a ventricular pacing stimulus before some, but at most half, of the QRS complexes",
        S.MASON_2007,
        "pacemaker demand pacing occasional",
    ),
    _d(
        "rhythm.premature_atrial",
        "premature atrial complexes",
        "beats earlier than 85 % of the local RR with the dominant QRS shape, in a rhythm with "
        "P waves",
        S.MASON_2007,
        "PAC APC ectopic extrasystole supraventricular",
    ),
    _d(
        "rhythm.premature_ventricular",
        "premature ventricular complexes",
        "beats earlier than 85 % of the local RR with a QRS shape unlike the dominant one and "
        "a QRS >= 120 ms",
        S.MASON_2007,
        "PVC VPC VEB ectopic extrasystole",
    ),
    _d(
        "rhythm.premature_other",
        "premature complexes, origin undetermined",
        "beats earlier than 85 % of the local RR with a QRS shape unlike the dominant one but "
        "a QRS < 120 ms (aberrant conduction or ventricular origin)",
        S.MASON_2007,
        "premature aberrant extrasystole",
    ),
    _d(
        "rhythm.undetermined",
        "undetermined rhythm",
        "none of the rhythm criteria above is met",
        S.MASON_2007,
        "unknown unclassified",
    ),
    _d(
        "rhythm.svt",
        "supraventricular tachycardia",
        "reader's statement",
        S.MASON_2007,
        "SVT AVNRT AVRT narrow complex tachycardia",
        automatic=False,
    ),
    _d(
        "rhythm.vt",
        "ventricular tachycardia",
        "reader's statement",
        S.MASON_2007,
        "VT wide complex tachycardia",
        automatic=False,
    ),
    _d(
        "rhythm.wandering_atrial",
        "wandering atrial pacemaker",
        "reader's statement",
        S.MASON_2007,
        "multifocal atrial",
        automatic=False,
    ),
    _d(
        "rhythm.av_block_second_degree_wenckebach",
        "second-degree AV block, Mobitz type I (Wenckebach)",
        "reader's statement",
        S.MASON_2007,
        "Wenckebach Mobitz I",
        automatic=False,
    ),
    _d(
        "rhythm.av_block_second_degree_mobitz_ii",
        "second-degree AV block, Mobitz type II",
        "reader's statement",
        S.MASON_2007,
        "Mobitz II",
        automatic=False,
    ),
    _d(
        "rhythm.av_block_complete",
        "complete (third-degree) AV block",
        "reader's statement",
        S.MASON_2007,
        "complete heart block CHB dissociation",
        automatic=False,
    ),
    # --- conduction ----------------------------------------------------------------------
    _d(
        "conduction.first_degree_av_block",
        "first-degree AV block",
        "PR > 200 ms (P waves, no pacing, no pre-excitation)",
        (S.MASON_2007, S.KUSUMOTO_2019),
        "1st degree AVB prolonged PR",
    ),
    _d(
        "conduction.rbbb",
        "complete right bundle branch block",
        "QRS >= 120 ms; rsr', rsR' or rSR' in V1 or V2, or a broad R with R-peak time > 50 ms "
        "there; S wider than R or longer than 40 ms in I and V6",
        S.SURAWICZ_2009,
        "RBBB right bundle",
    ),
    _d(
        "conduction.incomplete_rbbb",
        "incomplete right bundle branch block",
        "QRS 110-119 ms with the right bundle branch block pattern (rsr' in V1 or V2; S wider "
        "than R or longer than 40 ms in I and V6)",
        S.SURAWICZ_2009,
        "IRBBB incomplete right bundle rSr",
    ),
    _d(
        "conduction.lbbb",
        "complete left bundle branch block",
        "QRS >= 120 ms; R-peak time > 60 ms in V5 and V6; no q wave in I, V5 and V6; V1 "
        "mainly negative (QS or rS)",
        S.SURAWICZ_2009,
        "LBBB left bundle",
    ),
    _d(
        "conduction.incomplete_lbbb",
        "incomplete left bundle branch block",
        "QRS 110-119 ms; R-peak time > 60 ms in V4, V5 or V6; no q wave in I, V5 and V6",
        S.SURAWICZ_2009,
        "ILBBB incomplete left bundle",
    ),
    _d(
        "conduction.lafb",
        "left anterior fascicular block",
        "QRS axis -45 to -90 deg; qR in aVL; R-peak time in aVL >= 45 ms; QRS < 120 ms",
        S.SURAWICZ_2009,
        "LAFB LAHB left anterior hemiblock",
    ),
    _d(
        "conduction.lpfb",
        "left posterior fascicular block",
        "QRS axis +90 to +180 deg; rS in I and aVL; qR in III and aVF; QRS < 120 ms",
        S.SURAWICZ_2009,
        "LPFB LPHB left posterior hemiblock",
    ),
    _d(
        "conduction.ivcd",
        "nonspecific intraventricular conduction delay",
        "QRS > 110 ms without the criteria of right or left bundle branch block",
        S.SURAWICZ_2009,
        "IVCD IVCD wide QRS",
    ),
    _d(
        "conduction.preexcitation",
        "ventricular pre-excitation",
        "PR < 120 ms with a delta wave (a slow ramp of at least 25 ms and 0.1 mV at the QRS "
        "onset, in the direction of the QRS) in at least two leads",
        S.SURAWICZ_2009,
        "WPW Wolff-Parkinson-White delta wave accessory pathway",
    ),
    # --- axis --------------------------------------------------------------------------
    _d(
        "axis.left_deviation",
        "left axis deviation",
        "frontal QRS axis from -30 (exclusive) to -90 deg",
        (S.MASON_2007, S.SURAWICZ_2009),
        "LAD left axis",
    ),
    _d(
        "axis.right_deviation",
        "right axis deviation",
        "frontal QRS axis from +90 (exclusive) to +180 deg",
        (S.MASON_2007, S.SURAWICZ_2009),
        "RAD right axis",
    ),
    _d(
        "axis.extreme",
        "extreme axis deviation (right superior axis)",
        "frontal QRS axis between -90 and -180 deg (both exclusive)",
        S.MASON_2007,
        "northwest axis no man's land indeterminate",
    ),
    _d(
        "axis.indeterminate",
        "indeterminate axis",
        "the net QRS areas of the limb leads are all near zero: no axis can be given",
        S.MASON_2007,
        "isoelectric axis",
    ),
    # --- chambers ------------------------------------------------------------------------
    _d(
        "chamber.lvh",
        "left ventricular hypertrophy by voltage criteria",
        "age >= 35 y, QRS < 120 ms, not paced; any of: Sokolow-Lyon SV1 + RV5/V6 > 3.5 mV; "
        "Cornell RaVL + SV3 > 2.8 mV men, > 2.0 mV women; Cornell product (RaVL + SV3, + 0.6 "
        "mV in women) x QRS > 2440 mm x ms; Peguero-Lo Presti deepest S + SV4 >= 2.8 mV men, "
        ">= 2.3 mV women",
        (S.SOKOLOW_1949, S.CASALE_1985, S.MOLLOY_1992, S.PEGUERO_2017, S.HANCOCK_2009),
        "LVH hypertrophy voltage Sokolow Cornell Peguero",
    ),
    _d(
        "chamber.lvh_repolarization",
        "left ventricular hypertrophy with secondary repolarization abnormality",
        "voltage criteria for left ventricular hypertrophy met, with ST depression (J+60 <= "
        "-0.05 mV) and T inversion (<= -0.1 mV) in I, aVL, V5 or V6 (strain pattern)",
        (S.HANCOCK_2009, S.SOKOLOW_1949),
        "LVH strain repolarisation",
    ),
    _d(
        "chamber.rvh",
        "right ventricular hypertrophy",
        "QRS axis > +90 deg and QRS < 120 ms, with R/S in V1 >= 1 and R in V1 >= 0.5 mV, or "
        "RV1 + SV5/V6 >= 1.05 mV",
        (S.HANCOCK_2009, S.SOKOLOW_RVH_1949),
        "RVH right ventricular hypertrophy",
    ),
    _d(
        "chamber.left_atrial",
        "left atrial abnormality",
        "P duration >= 120 ms, or P terminal force in V1 (depth x duration of its negative "
        "end) >= 0.04 mm x s",
        (S.HANCOCK_2009, S.MORRIS_1964),
        "LAA LAE left atrial enlargement P mitrale",
    ),
    _d(
        "chamber.right_atrial",
        "right atrial abnormality",
        "P >= 0.25 mV in II, III or aVF, or an upright P >= 0.15 mV in V1 or V2",
        S.HANCOCK_2009,
        "RAA RAE right atrial enlargement P pulmonale",
    ),
    _d(
        "chamber.low_voltage_limb",
        "low QRS voltage in the limb leads",
        "QRS amplitude (highest minus lowest wave) < 0.5 mV in every limb lead",
        S.MASON_2007,
        "low voltage limb",
    ),
    _d(
        "chamber.low_voltage_precordial",
        "low QRS voltage in the precordial leads",
        "QRS amplitude (highest minus lowest wave) < 1.0 mV in every precordial lead",
        S.MASON_2007,
        "low voltage chest precordial",
    ),
    # --- repolarization and QT -------------------------------------------------------------
    _d(
        "repolarization.qtc_over_450",
        "QTc > 450 ms",
        "QTc (Fridericia) > 450 ms and <= 480 ms; QRS < 120 ms, not paced or pre-excited",
        S.ICH_E14,
        "QTcF prolonged drug safety categorical",
    ),
    _d(
        "repolarization.qtc_over_480",
        "QTc > 480 ms",
        "QTc (Fridericia) > 480 ms and <= 500 ms; QRS < 120 ms, not paced or pre-excited",
        S.ICH_E14,
        "QTcF prolonged drug safety categorical",
    ),
    _d(
        "repolarization.qtc_over_500",
        "QTc > 500 ms",
        "QTc (Fridericia) > 500 ms; QRS < 120 ms, not paced or pre-excited",
        S.ICH_E14,
        "QTcF prolonged drug safety categorical",
    ),
    _d(
        "repolarization.prolonged_qt",
        "prolonged QT interval",
        "QTc (Fridericia) >= 450 ms men, >= 460 ms women (narrowest when sex not stated); "
        "QRS < 120 ms, not paced or pre-excited",
        S.RAUTAHARJU_2009,
        "long QT LQT",
    ),
    _d(
        "repolarization.short_qt",
        "short QT interval",
        "QTc (Fridericia) <= 340 ms; QRS < 120 ms, not paced or pre-excited",
        S.RAUTAHARJU_2009,
        "short QT SQT",
    ),
    _d(
        "repolarization.wide_qrs_t_angle",
        "wide frontal QRS-T angle",
        "angle between the frontal QRS and T axes > 100 deg; QRS < 120 ms",
        S.ARO_2012,
        "QRS-T angle discordance",
    ),
    _d(
        "repolarization.t_inversion",
        "T-wave inversion",
        "T <= -0.1 mV in two contiguous leads among I-aVL, II-aVF and V2-V6 (aVR, III and V1 "
        "excluded; V2 only with V3); QRS < 120 ms",
        S.RAUTAHARJU_2009,
        "negative T wave inverted",
    ),
    _d(
        "repolarization.u_wave",
        "U wave present",
        "a positive wave >= 0.05 mV within 240 ms after the T end in V2, V3 or V4",
        S.RAUTAHARJU_2009,
        "U wave prominent",
    ),
    _d(
        "repolarization.poor_r_progression",
        "poor R-wave progression",
        "R in V3 <= 0.3 mV; QRS < 120 ms",
        S.ZEMA_1982,
        "PRWP R wave progression anterior",
    ),
    _d(
        "repolarization.early_repolarization",
        "early repolarization pattern",
        "a notch or slur on the terminal QRS with its J peak >= 0.1 mV in two contiguous "
        "inferior (II, III, aVF) or lateral (I, aVL, V4-V6) leads; QRS < 120 ms",
        S.MACFARLANE_2015,
        "ERP J wave notch slur",
    ),
    _d(
        "repolarization.brugada_coved",
        "Brugada type 1 pattern",
        "coved ST elevation >= 0.2 mV at J in V1 or V2, falling through J+60 and J+80 ms, "
        "followed by a negative T wave (<= -0.05 mV)",
        S.PRIORI_2013,
        "Brugada coved",
    ),
    _d(
        "repolarization.nonspecific_st_t",
        "nonspecific ST-T abnormality",
        "reader's statement",
        S.MASON_2007,
        "ST-T changes",
        automatic=False,
    ),
    # --- ischemia and infarction ------------------------------------------------------------
    _d(
        "infarction.st_elevation",
        "ST elevation",
        "ST at J above the Fourth Universal Definition limit in two contiguous leads, backed "
        "by J+60 (else J+80) ms past the same limit",
        S.THYGESEN_2018,
        "STEMI injury ST elevation",
    ),
    _d(
        "infarction.st_depression",
        "ST depression",
        "ST at J <= -0.05 mV in two contiguous leads, backed by J+60 (else J+80) ms (slope not "
        "assessed)",
        S.THYGESEN_2018,
        "ischemia ST depression",
    ),
    _d(
        "infarction.q_waves",
        "Q waves consistent with prior infarction, age undetermined",
        "Q > 20 ms in V2-V3, or Q >= 30 ms and >= 0.1 mV deep in two contiguous leads of I, "
        "II, aVL, aVF, V4-V6",
        S.THYGESEN_2018,
        "old MI pathological Q infarct",
    ),
    # --- other -------------------------------------------------------------------------------
    _d(
        "other.normal_ecg",
        "normal ECG",
        "reader's statement",
        S.MASON_2007,
        "normal",
        automatic=False,
    ),
    _d(
        "other.abnormal_ecg",
        "abnormal ECG",
        "reader's statement",
        S.MASON_2007,
        "abnormal",
        automatic=False,
    ),
    _d(
        "other.borderline_ecg",
        "borderline ECG",
        "reader's statement",
        S.MASON_2007,
        "borderline",
        automatic=False,
    ),
    _d(
        "other.artifact",
        "artifact",
        "reader's statement",
        S.MASON_2007,
        "noise artefact technical",
        automatic=False,
    ),
)

CATALOGUE: dict[str, StatementDef] = {d.code: d for d in ENTRIES}


def entry(code: str) -> StatementDef:
    """The catalogue entry of ``code`` (KeyError for an unknown code)."""
    return CATALOGUE[code]


def search(query: str, entries: Iterable[StatementDef] = ENTRIES) -> list[StatementDef]:
    """Entries whose text, code, category or keywords contain every word of ``query``
    (case-insensitive), in catalogue order; every entry for an empty query.

    >>> [d.code for d in search("right bundle")]
    ['conduction.rbbb', 'conduction.incomplete_rbbb']
    >>> [d.code for d in search("wpw")]
    ['conduction.preexcitation']
    """
    words = query.lower().split()
    out = []
    for d in entries:
        hay = " ".join((d.text, d.code, CATEGORY_NAMES.get(d.category, ""), *d.keywords)).lower()
        if all(w in hay for w in words):
            out.append(d)
    return out
