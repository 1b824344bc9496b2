"""The paper of the pictures: placing text boxes where they overlap nothing placed before, and writing a
matplotlib figure as PNG through a temporary file and a rename (shared by the sheet, the CG chart and the plots)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.atomic import write_atomic

__all__ = ["PANEL_BG", "Rect", "LabelPlacer", "write_png_atomic"]

PANEL_BG = "#fbf9f4"
Rect = tuple[float, float, float, float]  # x, y (top-left, y down), width, height in sheet pixels


class LabelPlacer:
    """Greedy placement of text boxes that must not overlap each other (sheet pixels, y down)."""

    def __init__(self, fig: Any, ax: Any, renderer: Any) -> None:
        self.fig, self.ax, self.renderer = fig, ax, renderer
        self.taken: list[Rect] = []
        self.placed: list[tuple[str, Any]] = []  # (text, its text artist)

    def reserve(self, rect: Rect) -> None:
        self.taken.append(rect)

    def _free(self, r: Rect, bounds: Rect) -> bool:
        x, y, w, h = r
        bx, by, bw, bh = bounds
        if x < bx or y < by or x + w > bx + bw or y + h > by + bh:
            return False
        return all(x + w <= tx or tx + tw <= x or y + h <= ty or ty + th <= y for tx, ty, tw, th in self.taken)

    def measure(self, text: str, **kw: Any) -> tuple[float, float]:
        """Estimated text box size, px: DejaVu Sans averages about 0.55 em a character (0.62 em bold), lines
        1.2 em apart (a slight overestimate keeps boxes apart; measuring each box exactly costs a text layout)."""
        size_px = float(kw.get("fontsize", 10.0)) / 0.72
        em = 0.62 if kw.get("weight") == "bold" else 0.55
        rows = text.split("\n")
        return em * size_px * max(len(r) for r in rows), 1.2 * size_px * len(rows)

    def place(
        self, anchor: npt.ArrayLike, text: str, bounds: Rect, distances: tuple[float, ...] = (14.0, 34.0, 64.0, 110.0),
        leader: str | None = None, box: dict[str, Any] | None = None, prefer: str = "ne", **kw: Any,
    ) -> Rect | None:
        """Put ``text`` near ``anchor`` (sheet px) in the first free spot; returns its rectangle or None."""
        ax_, ay = (float(v) for v in np.asarray(anchor, float))
        pad = 4.0
        tw, th = self.measure(text, **kw)
        tw, th = tw + 2 * pad, th + 2 * pad
        order = {"ne": (1, -1), "se": (1, 1), "nw": (-1, -1), "sw": (-1, 1), "e": (1, 0), "w": (-1, 0),
                 "n": (0, -1), "s": (0, 1)}
        first = [order[prefer]] + [v for k, v in order.items() if k != prefer]
        for d in distances:
            for dx, dy in first:
                cx = ax_ + dx * d
                cy = ay + dy * d
                x = cx if dx > 0 else (cx - tw if dx < 0 else cx - tw / 2)
                y = cy if dy > 0 else (cy - th if dy < 0 else cy - th / 2)
                rect = (x, y, tw, th)
                if self._free(rect, bounds):
                    self.taken.append(rect)
                    artist = self.ax.text(x + pad, y + pad, text, va="top", ha="left", zorder=6, **kw)
                    style = box or {"fc": PANEL_BG, "ec": "none", "alpha": 0.86}
                    from matplotlib.patches import Rectangle

                    patch = Rectangle((x, y), tw, th, zorder=5, lw=style.get("lw", 0.8),
                                      fc=style["fc"], ec=style["ec"], alpha=style.get("alpha", 1.0))
                    self.ax.add_artist(patch)
                    self.placed.append((text, artist))
                    if leader:
                        px = min(max(ax_, x), x + tw)
                        py = min(max(ay, y), y + th)
                        self.ax.plot([ax_, px], [ay, py], color=leader, lw=0.9, zorder=4)
                    return rect
        return None


def write_png_atomic(fig: Any, path: Path, software: str = "massmodel render",
                     under: list[tuple[npt.NDArray[np.uint8], int, int]] | None = None) -> None:
    """Save a matplotlib figure as PNG through a temporary file in the same folder and a rename.

    ``under`` lists RGB images (H, W, 3) with their top-left pixel (x, y) to lay under the drawing: the figure is
    drawn with a transparent face, the images are pasted pixel for pixel into the paper, and the drawing is
    blended over them (faster and more exact than resampling them through matplotlib).
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from PIL import Image, PngImagePlugin

    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    paper = fig.get_facecolor()
    fig.patch.set_alpha(0.0)
    canvas.draw()
    rgba = np.asarray(canvas.buffer_rgba())
    base: Any = np.empty(rgba.shape[:2] + (3,), np.uint16)
    base[:] = np.rint(np.array(paper[:3]) * 255.0).astype(np.uint16)
    for image, x, y in under or []:
        img: Any = image  # (H, W, 3) uint8
        h, w = img.shape[:2]
        base[y : y + h, x : x + w] = img[: base.shape[0] - y, : base.shape[1] - x]
    alpha = rgba[:, :, 3:4].astype(np.uint16)
    out = ((rgba[:, :, :3] * alpha + base * (255 - alpha) + 127) // 255).astype(np.uint8)
    info = PngImagePlugin.PngInfo()
    info.add_text("Software", software)
    path.parent.mkdir(parents=True, exist_ok=True)
    write_atomic(path, lambda tmp: Image.fromarray(out).save(tmp, format="PNG", pnginfo=info, compress_level=2),
                 suffix=".png")
