"""The cautions a reader of a sample's numbers must see, in one place.

``summary.json`` (key ``cautions``), ``run.log``, ``key_numbers.csv`` and the report all carry the
same sentences, made here, so that what is said about a result does not depend on where it is read.
"""

from __future__ import annotations

#: what every prediction of splitting in the ground assumes (one layer, a stack, the field fit)
LAYER_MODEL = ("The prediction assumes a fabric coherent over the whole layer, no melt or aligned cracks, and a "
               "plane-wave, ray-theory view (no ray bending, phase velocities); real splitting depends on "
               "frequency and on structure the sample does not see.")

RECALLED_FIELDS = {"cij_gpa": "single-crystal constants", "density_kg_m3": "density", "lattice": "lattice",
                   "published_axes": "crystal setting of the constants", "source": "citation"}


def mineral_cautions(mineral) -> list[str]:
    """List the cautions about a library entry.

    They name the fields recalled without the source at hand, and how its constants compare with
    published aggregate moduli (``Mineral.aggregate_comparison``).

    Parameters
    ----------
    mineral : fabric2seis.elastic.minerals.Mineral
        The library entry.

    Returns
    -------
    list of str
        One sentence per caution; empty when there is none.
    """
    notes = []
    recalled = [RECALLED_FIELDS.get(f, f) for f in mineral.from_memory if f in RECALLED_FIELDS]
    if recalled:
        notes.append(f"{mineral.name}: {', '.join(recalled)} recalled without the source at hand (from memory); "
                     "see 'fabric2seis minerals " + mineral.name + "'")
    if mineral.constants_recalled:
        check = mineral.aggregate_comparison()
        if check is None:
            notes.append(f"{mineral.name}: no published aggregate moduli in the library to check the recalled "
                         "constants against; treat its contribution as provisional")
        else:
            verdict = ("DISAGREE with" if check["disputed"] else "agree with")
            notes.append(f"{mineral.name}: the Hill moduli of the recalled constants (K {check['k_hill_gpa']:g}, "
                         f"G {check['g_hill_gpa']:g} GPa) {verdict} published aggregate moduli (K "
                         f"{check['k_published_gpa']:g}, G {check['g_published_gpa']:g} GPa; {check['source']}) "
                         f"within {100 * check['largest_difference']:.1f} %")
    return notes


def sample_cautions(minerals, condition_notes: list[str], outside_interval: list[str]) -> list[str]:
    """List every caution of one sample: its minerals, its conditions, estimates outside their intervals.

    Parameters
    ----------
    minerals : iterable of Mineral
        The sample's minerals.
    condition_notes : list of str
        What was assumed to bring the constants to the conditions (:func:`elastic.conditions.assumptions`).
    outside_interval : list of str
        Keys whose estimate lies outside its bootstrap interval.

    Returns
    -------
    list of str
        One sentence per caution.
    """
    notes = [n for m in minerals for n in mineral_cautions(m)]
    notes += [f"conditions: {n}" for n in condition_notes]
    if outside_interval:
        notes.append(f"the estimate lies outside its bootstrap interval for {', '.join(outside_interval)} (few "
                     "grains, or grain-mean orientations differ from the pixels the estimate uses)")
    return notes
