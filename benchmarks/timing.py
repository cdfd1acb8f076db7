"""Timing helpers shared by the benchmark scripts."""

import time


def best_of(func, repeats=3):
    best, out = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        out = func()
        best = min(best, time.perf_counter() - start)
    return best, out


def interleaved(funcs, rounds, repeats=None):
    """Best time and last result of each function, run in alternation so that both see the same
    machine (its load and clock change over seconds); ``repeats[k]`` calls per round for funcs[k]."""
    repeats = repeats or [1] * len(funcs)
    best, out = [float("inf")] * len(funcs), [None] * len(funcs)
    for _ in range(rounds):
        for k, func in enumerate(funcs):
            t, out[k] = best_of(func, repeats[k])
            best[k] = min(best[k], t)
    return best, out
