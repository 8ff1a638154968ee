"""Exhaustive search for the cycles of a map among small starts.

Modules: definition (what a hunt decides, and its exact reference), engine (the same
decisions vectorised with numpy), survey (ranges hunted in parallel, saved and merged).
"""
