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


def _fields(rel: Relations) -> tuple[object, ...]:
    return (rel.word_group, rel.mirror, rel.mirror_map, rel.scaled_from, rel.scaled_to, rel.shared_factor, rel.keys)


def test_relations_kept_by_the_cache_are_those_found_again(tmp_path, monkeypatch) -> None:
    # The relations are found from the maps' definitions and the cycles' least members (which fix each
    # cycle's members and word): kept under a digest of those, they are taken from the cache by a
    # catalogue with the same digest (a note edited), and found again by one without (a cycle removed).
    import shutil

    from conftest import VALID

    from builder.catalogue import relations as relations_module
    from builder.catalogue.cache import VerifyCache
    from builder.catalogue.verify import verify_catalogue

    root = shutil.copytree(VALID, tmp_path / "catalogue")
    found: list[object] = []
    real = relations_module._find_relations
    monkeypatch.setattr(relations_module, "_find_relations", lambda cat: found.append(cat) or real(cat))

    def relations() -> Relations:
        with VerifyCache.open(tmp_path / "cache") as cache:
            catalogue = verify_catalogue(root, cache=cache).catalogue
            return relations_module.find_relations(catalogue, cache)

    first = relations()
    assert len(found) == 1 and first.mirror  # 3x+1 and 3x-1 mirror each other (Lagarias 1985)
    path = root / "cycles" / "3x-plus-1" / "through-minus-5.yaml"
    path.write_text(path.read_text(encoding="utf-8") + "  notes: an edited note\n", encoding="utf-8")
    kept = relations()
    assert len(found) == 1
    assert _fields(kept) == _fields(real(verify_catalogue(root).catalogue))
    assert all(kept.keys[k] is k for k in kept.keys) and all(
        kept.keys[k] is k for g in kept.word_group.values() for k in g
    )
    (root / "cycles" / "3x-minus-1" / "through-17.yaml").unlink()
    fewer = relations()
    assert len(found) == 2
    assert _fields(fewer) == _fields(real(verify_catalogue(root).catalogue)) != _fields(kept)
