"""A chart of the auroral oval seen from above the magnetic pole, in the project's own look."""

from __future__ import annotations

import io

import numpy as np

from auroraplan import oval
from auroraplan.outfiles import write_bytes_atomic
from auroraplan.render.style import AMBER, INK, PAPER, RULE, SLATE, TEAL

RIM_LAT = 40.0  # outermost magnetic latitude drawn


def _radius(mlat):
    """Polar distance on the chart: colatitude in degrees."""
    return 90.0 - np.asarray(mlat, dtype=float)


def oval_figure(kp: float, model: str = oval.DEFAULT_MODEL):
    """A matplotlib figure of the band (MLT around the pole, midnight at the bottom)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    mlt = np.linspace(0.0, 24.0, 241)
    b = oval.boundaries(kp, mlt, model)
    theta = mlt / 24.0 * 2.0 * np.pi  # 0 h at the bottom via the offset below

    fig = plt.figure(figsize=(6.0, 7.0), dpi=120, facecolor=PAPER)
    fig.subplots_adjust(top=0.88, bottom=0.2)
    ax = fig.add_subplot(projection="polar", facecolor=PAPER)
    ax.set_theta_zero_location("S")  # magnetic midnight at the bottom
    ax.set_theta_direction(1)  # MLT increases anticlockwise (dawn on the right)
    ax.set_rlim(0, 90.0 - RIM_LAT)
    rings = np.arange(50.0, 90.0, 10.0)
    ax.set_rgrids(_radius(rings), labels=[f"{r:.0f}°" for r in rings], color=SLATE, fontsize=8)
    ax.set_xticks(np.arange(0, 24, 3) / 24.0 * 2 * np.pi)
    ax.set_xticklabels([f"{h:02d} MLT" for h in range(0, 24, 3)], color=INK, fontsize=9)
    ax.grid(color=RULE, linewidth=0.6)
    ax.spines["polar"].set_color(RULE)

    if np.all(np.isfinite(b["equatorward"])):
        ax.fill_between(theta, _radius(b["poleward"]), _radius(b["equatorward"]),
                        color=TEAL, alpha=0.35, linewidth=0, label="discrete oval")
        ax.plot(theta, _radius(b["poleward"]), color=TEAL, linewidth=1.4)
        ax.plot(theta, _radius(b["equatorward"]), color=TEAL, linewidth=2.0,
                label="equatorward edge (what you can see)")
    ax.plot(theta, _radius(b["diffuse"]), color=AMBER, linewidth=1.4, linestyle="--",
            label="diffuse aurora, equatorward edge")
    ax.set_title(f"Auroral oval at Kp {kp:g}  ·  {model}", color=INK, fontsize=12, pad=18)
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.06), ncol=1, frameon=False,
              labelcolor=INK, fontsize=8)
    fig.text(0.5, 0.02, "Seen from above the north magnetic pole; sun at the top. "
             "Magnetic latitude (AACGM).", ha="center", color=SLATE, fontsize=7)
    return fig


def write_oval_png(path, kp: float, model: str = oval.DEFAULT_MODEL):
    """Draw the oval and write it as a PNG atomically (no half-written file on failure)."""
    import matplotlib.pyplot as plt

    fig = oval_figure(kp, model)
    buf = io.BytesIO()
    try:
        fig.savefig(buf, format="png", facecolor=PAPER, bbox_inches="tight")
    finally:
        plt.close(fig)
    return write_bytes_atomic(path, buf.getvalue())
