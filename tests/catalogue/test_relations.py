"""builder.catalogue.relations: the first cycles of other maps with the same word, and the mirror's canonical member.

The rules checked (common practice, no source): one map has one cycle per word (the cycle equation
fixes the start from the word), so a word's group holds at most one cycle of each map, and taking
the group's head instead of filtering all of it gives the same cycles; and the canonical member of
the negated cycle (least |n|, the positive one on a tie) follows from the cycle's own without
negating every member.
"""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from builder.arith.dynamics import canonical_index
from builder.catalogue.relations import Relations, negated_canonical


@given(
    st.lists(st.integers(0, 40), min_size=1, max_size=30, unique=True),
    st.data(),
)
def test_the_head_of_a_group_gives_the_first_cycles_of_other_maps(maps: list[int], data: st.DataObject) -> None:
    group = tuple((f"map-{m}", "c") for m in maps)  # one cycle per map, in catalogue order
    rel = Relations(word_group={key: group for key in group})
    key = data.draw(st.sampled_from(group))
    leaving = set(data.draw(st.lists(st.sampled_from(group), max_size=4)))
    first = data.draw(st.integers(0, 12))
    whole = [k for k in group if k[0] != key[0] and k not in leaving][:first]
    assert rel.same_word(key, first, leaving) == whole
    assert rel.same_word(("map-none", "c"), first) == []  # a cycle whose word no other map shares


@given(st.lists(st.integers(-50, 50), min_size=1, max_size=12, unique=True))
def test_the_negated_cycles_canonical_member_is_read_from_the_cycles_own(members: list[int]) -> None:
    negated = [-n for n in members]
    own = members[canonical_index(members)]
    assert negated_canonical(members, own) == negated[canonical_index(negated)]
