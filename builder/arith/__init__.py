"""Exact number theory of residue-class maps: integers of any size, words, orbits, fingerprints, odds.

The lowest stage above errors and wording: no file formats, templates or processes.
Modules: integers (decimal text and the gmpy2 switch), words (rotations, necklaces),
dynamics (maps, orbits, traces, the cycle equation), fingerprint, odds (a heuristic model).
"""
