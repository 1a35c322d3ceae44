"""Time per equilibrium curve of the stability analysis (target: a loaded curve in at most 0.3 s median).

Runs every sleeper x ballast x shoulder preset on 60E1 and 136RE, tangent and on an 800 m
curve, built through ``trackplan.track.build_track`` with the default train (loaded) and with
``loading = "none"``, with the cache cleared, and prints the median and the slowest time per
curve of each, then the time of a repeated (cached) call. Run: ``python bench/bench_stability.py``.
"""

from __future__ import annotations

import statistics
import time

from trackplan import rails, stability as st, thermal
from trackplan.track import build_track


def main() -> None:
    st.solve_equilibrium_curve(st.track_parameters(rails.get_profile("60E1"), thermal.default_steel(False),
                                                   "timber", "consolidated"))  # imports, warm-up
    for loading in ("freight-22.5t", "none"):
        inp = run(loading)
    t0 = time.perf_counter()
    for _ in range(1000):
        st.analyse_stability(inp)
    print(f"cached call: {(time.perf_counter() - t0) / 1000 * 1e6:.1f} us")


def run(loading: str):
    times, failures = [], 0
    for rail in ("60E1", "136RE"):
        prof = rails.get_profile(rail)
        steel = thermal.default_steel(prof.is_north_american)
        for sl in st.sleeper_types():
            for b in st.ballast_states():
                for sh in st.shoulder_types():
                    for radius in (None, 800.0):
                        inp = build_track(prof, steel, sleeper=sl, ballast=b, shoulder=sh, radius_m=radius,
                                          loading=loading)
                        st.clear_cache()
                        t0 = time.perf_counter()
                        try:
                            st.analyse_stability(inp)
                        except st.StabilityError:
                            failures += 1
                        times.append(time.perf_counter() - t0)
    print(f"loading {loading}: curves: {len(times)} ({failures} explicit failures)")
    print(f"  median time per curve: {statistics.median(times) * 1e3:.0f} ms  "
          f"(min {min(times) * 1e3:.0f} ms, max {max(times) * 1e3:.0f} ms)")
    return inp


if __name__ == "__main__":
    main()
