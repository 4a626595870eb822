"""Writing finished matplotlib figures to files, and the caution every sheet carries."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

__all__ = ["CAUTION", "caution_line", "save_figure"]

#: What the results are and are not: on every sheet and in summary.json.
CAUTION = (
    "Design estimate of a 2-D magnetostatic model: no end effects, skew only as modelled "
    "slices, no eddy currents, "
    "no thermal or mechanical analysis. A machine built from these figures must be checked by "
    "structural (rotor ribs at overspeed), thermal and electrical analysis and by test, under "
    "the applicable standards and local codes, by qualified engineers."
)


def caution_line(*additions: str) -> str:
    """``Caution:`` with :data:`CAUTION` and the cautions a sheet adds (e.g. the rib
    stress estimate's), one paragraph."""
    return " ".join(("Caution:", CAUTION, *additions))


def save_figure(fig, out_dir: str | Path, stem: str, formats: Sequence[str] = ("png", "pdf"),
                dpi: float = 150) -> list[Path]:
    """Write ``fig`` as ``out_dir/stem.<format>`` for each format, then close it.

    The page is cropped to what is drawn (``bbox_inches="tight"``, 0.08 in of padding), so
    a figure of fixed aspect (a cross-section, a slot table) carries no empty margins.

    Parameters
    ----------
    fig
        A matplotlib figure.
    out_dir
        Existing folder.
    stem
        File name without the suffix.
    formats
        Suffixes matplotlib knows (``"png"``, ``"pdf"``, ``"svg"``), in writing order.
    dpi
        Resolution of raster output, dots per inch (PNG, and rasterised parts of vector
        formats).

    Returns
    -------
    list of Path
        The files written, in the order of ``formats``.
    """
    import matplotlib.pyplot as plt

    out_dir = Path(out_dir)
    paths = [out_dir / f"{stem}.{suffix}" for suffix in formats]
    try:
        for path in paths:
            fig.savefig(path, dpi=dpi, bbox_inches="tight", pad_inches=0.08)
    finally:
        plt.close(fig)
    return paths
