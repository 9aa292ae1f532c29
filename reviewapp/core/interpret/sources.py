"""The published sources of the statement criteria.

``citation`` is what a reader sees (screen, report, CLI): authors, journal, year, pages.
``basis`` is for the code and the tests only: "from memory" where the criterion was recalled
rather than read from the document here, "common practice, no source" where the trade uses it
without one citable source (then the reader sees that it is a conventional criterion).
"""

from __future__ import annotations

from dataclasses import dataclass

FROM_MEMORY = "from memory"
COMMON_PRACTICE = "common practice, no source"


@dataclass(frozen=True)
class Source:
    citation: str
    basis: str = FROM_MEMORY


MASON_2007 = Source(
    "Mason JW et al., AHA/ACCF/HRS recommendations for the standardization and "
    "interpretation of the ECG, Part II: diagnostic statement list, Circulation "
    "2007;115:1325-1332"
)
KLIGFIELD_2007 = Source(
    "Kligfield P et al., AHA/ACCF/HRS recommendations, Part I, Circulation 2007;115:1306-1324"
)
SURAWICZ_2009 = Source(
    "Surawicz B et al., AHA/ACCF/HRS recommendations, Part III: intraventricular conduction "
    "disturbances, Circulation 2009;119:e235-e240"
)
RAUTAHARJU_2009 = Source(
    "Rautaharju PM et al., AHA/ACCF/HRS recommendations, Part IV: the ST segment, T and U "
    "waves, and the QT interval, Circulation 2009;119:e241-e250"
)
HANCOCK_2009 = Source(
    "Hancock EW et al., AHA/ACCF/HRS recommendations, Part V: electrocardiogram changes "
    "associated with cardiac chamber hypertrophy, Circulation 2009;119:e251-e261"
)
KUSUMOTO_2019 = Source(
    "Kusumoto FM et al., ACC/AHA/HRS guideline on bradycardia and cardiac conduction delay, "
    "Circulation 2019;140:e382-e482"
)
ICH_E14 = Source(
    "ICH E14, The clinical evaluation of QT/QTc interval prolongation and proarrhythmic "
    "potential for non-antiarrhythmic drugs, 2005"
)
SOKOLOW_1949 = Source("Sokolow M, Lyon TP, Am Heart J 1949;37:161-186")
SOKOLOW_RVH_1949 = Source("Sokolow M, Lyon TP, Am Heart J 1949;38:273-294")
CASALE_1985 = Source("Casale PN et al., J Am Coll Cardiol 1985;6:572-580")
MOLLOY_1992 = Source("Molloy TJ et al., J Am Coll Cardiol 1992;20:1180-1186")
PEGUERO_2017 = Source("Peguero JG et al., J Am Coll Cardiol 2017;69:1694-1703")
MORRIS_1964 = Source("Morris JJ Jr et al., Circulation 1964;29:242-252")
THYGESEN_2018 = Source(
    "Thygesen K et al., Fourth Universal Definition of Myocardial Infarction, Circulation "
    "2018;138:e618-e651"
)
MACFARLANE_2015 = Source(
    "Macfarlane PW et al., The early repolarization pattern: a consensus paper, J Am Coll "
    "Cardiol 2015;66:470-477"
)
PRIORI_2013 = Source(
    "Priori SG et al., HRS/EHRA/APHRS expert consensus statement on inherited primary "
    "arrhythmia syndromes, Heart Rhythm 2013;10:1932-1963"
)
ZEMA_1982 = Source("Zema MJ, Kligfield P, Arch Intern Med 1982;142:1145-1148")
ARO_2012 = Source("Aro AL et al., Europace 2012;14:872-876")
BATCHVAROV_2007 = Source("Batchvarov VN, Malik M, Camm AJ, Europace 2007;9:1081-1090")
SLOCUM_1985 = Source("Slocum J et al., Circulation 1985;72:1028-1036")
# Trade criteria without one citable source: the reader is told so.
CONVENTIONAL = Source("conventional criterion, no single published source", COMMON_PRACTICE)
ENGINE = Source(
    "this program's own measurement (method in its documentation); not a published criterion",
    COMMON_PRACTICE,
)
