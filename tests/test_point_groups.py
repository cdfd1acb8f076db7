"""The point groups a run uses without orix (fabric2seis.point_groups), against orix's own groups
(the reference library, orix.quaternion.symmetry) and against the group axioms."""

import numpy as np
import pytest
from orix.quaternion import Rotation
from orix.quaternion import symmetry as orix_symmetry

from fabric2seis.orientations import multiply, to_matrices
from fabric2seis.point_groups import POINT_GROUP_NAMES, point_group

CASES = [(name, None) for name in POINT_GROUP_NAMES] + [("2/m", "b")]


def orix_group(name, unique_axis):
    if unique_axis == "b":          # b-unique 2/m: the 2-fold along y (orix's C2y with the inversion)
        group = orix_symmetry.Symmetry.from_generators(orix_symmetry.C2y, orix_symmetry.Ci)
        group.name = "2/m"
        return group
    return next(g for g in orix_symmetry._groups if g.name == name)


def as_set(matrices):
    return {tuple(np.round(m, 9).ravel() + 0.0) for m in matrices}


def test_the_names_are_orix_s_38_point_groups():
    # orix.quaternion.symmetry lists the 32 crystal classes, with 2 and m in three settings each (211,
    # 121, 112, m11, 1m1, 11m): 38 groups (reference library)
    assert sorted(POINT_GROUP_NAMES) == sorted(g.name for g in orix_symmetry._groups)
    assert len(set(POINT_GROUP_NAMES)) == 38


@pytest.mark.parametrize("name,unique_axis", CASES)
def test_each_group_is_orix_s_to_the_last_bit(name, unique_axis):
    # reference library: orix's proper subgroup (same quaternions, same order, same bits, so that
    # every result is unchanged), Laue class, and the proper parts of all its operations, which is
    # what a centrosymmetric tensor must be invariant under
    ours, theirs = point_group(name, unique_axis), orix_group(name, unique_axis)
    assert ours.name == theirs.name
    assert np.array_equal(ours.proper, theirs.proper_subgroup.data)
    assert ours.laue_name == theirs.laue.name
    assert as_set(to_matrices(ours.laue_proper)) == as_set(Rotation(theirs.data).to_matrix())
    assert ours.to_orix() == theirs


@pytest.mark.parametrize("name,unique_axis", CASES)
def test_each_table_is_a_group_of_rotations(name, unique_axis):
    # group axioms (any algebra text): the identity is in it, products and inverses stay in it;
    # rotations are unit quaternions, q and -q the same rotation
    for table in (point_group(name, unique_axis).proper, point_group(name, unique_axis).laue_proper):
        assert np.allclose(np.linalg.norm(table, axis=1), 1.0, atol=1e-15)
        members = as_set(to_matrices(table))
        assert len(members) == len(table)
        assert tuple(np.eye(3).ravel()) in members
        products = multiply(table[:, None, :], table[None, :, :]).reshape(-1, 4)
        assert as_set(to_matrices(products)) == members


def test_orders_of_the_rotation_groups():
    # orders of the proper rotation groups of the Laue classes (International Tables for
    # Crystallography, vol. A, table 10.1.2.2; from memory): 1, 2, 4, 4, 8, 3, 6, 6, 12, 12, 24
    orders = {"-1": 1, "2/m": 2, "mmm": 4, "4/m": 4, "4/mmm": 8, "-3": 3, "-3m": 6, "6/m": 6, "6/mmm": 12,
              "m-3": 12, "m-3m": 24}
    for laue, order in orders.items():
        assert len(point_group(laue).laue_proper) == order, laue
