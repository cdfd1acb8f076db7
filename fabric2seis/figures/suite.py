"""Suite comparison: fabric strength against shear-wave anisotropy, and delay per 100 km."""

from __future__ import annotations

import numpy as np

from fabric2seis.figures.projection import plt, save


def suite_figure(stem, table) -> list[str]:
    ok = table[table["status"] == "ok"].copy()
    fig, (ax1, ax2) = plt.subplots(1, 2, figsize=(10, 4))
    for _, row in ok.iterrows():
        main = row.get("uncertainty.main_phase")
        j = row.get(f"phases.{main}.J") if isinstance(main, str) else np.nan
        avs = row.get("seismic.avs_max_pct", np.nan)
        # intervals drawn as lines: a bootstrap interval need not contain the estimate (J is biased
        # upwards in resamples, where repeated grains add self-pairs)
        line = ax1.plot(j, avs, "o", ms=5)[0]
        ax1.plot([row.get("uncertainty.J.low", j), row.get("uncertainty.J.high", j)], [avs, avs],
                 color=line.get_color(), lw=1)
        ax1.plot([j, j], [row.get("uncertainty.avs_max_pct.low", avs), row.get("uncertainty.avs_max_pct.high", avs)],
                 color=line.get_color(), lw=1)
        ax1.annotate(row["sample"], (j, avs), fontsize=7, xytext=(4, 4), textcoords="offset points")
    ax1.set_xlabel("J-index of the main phase")
    ax1.set_ylabel("maximum AVs (%)")
    names = list(ok["sample"])
    delay = ok["splitting.along_z.delay_s_per_100km"].to_numpy(dtype=float) if len(ok) else np.array([])
    lo = ok.get("uncertainty.delay_s_per_100km.low", delay)
    hi = ok.get("uncertainty.delay_s_per_100km.high", delay)
    ax2.bar(range(len(names)), delay, color="tab:blue", alpha=0.7)
    for k, (a, b) in enumerate(zip(np.asarray(lo, float), np.asarray(hi, float))):
        ax2.plot([k, k], [a, b], color="black", lw=1.5)
    ax2.set_xticks(range(len(names)))
    ax2.set_xticklabels(names, rotation=30, ha="right", fontsize=7)
    ax2.set_ylabel("delay along Z (s per 100 km)")
    failed = table[table["status"] != "ok"]["sample"].tolist()
    fig.suptitle(f"Suite of {len(table)} samples ({len(ok)} processed"
                 + (f"; failed: {', '.join(failed)}" if failed else "") + "); lines: 95 % bootstrap intervals",
                 fontsize=9)
    fig.tight_layout()
    return save(fig, stem)
