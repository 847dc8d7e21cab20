"""Per-frame appearance descriptors and per-frame-pair motion descriptors. numpy and OpenCV only.

Appearance (one colour frame): an HSV colour histogram and a histogram of oriented gradients.
Motion (one pair of consecutive grey frames): dense optical flow, summarised as histograms of
flow orientation (HOF) and of motion boundaries (MBH), plus the mean flow.

Why these, measured on a 2-core machine (single thread, ms per frame at 320x180): HSV histogram
0.27, HOG in numpy 1.46, DIS "fast" flow 1.68 (Farnebaeck 13.0, DIS "medium" 7.6), HOF 0.49,
MBH 0.93. Eight colour frames and 32 flow fields per clip cost about 0.1 s, a tenth of the 1 s
budget, where a small CNN would need weights no current registry package ships and would not fit
the budget on one core. HOG is written with numpy because OpenCV 5 wheels no longer include
``cv2.HOGDescriptor``. DIS "fast" recovers a known translation of a textured frame to about
0.1 px (tests/features/test_descriptors.py), better than Farnebaeck at an eighth of its cost.
"""

from __future__ import annotations

import functools

import cv2
import numpy as np

#: HSV bins: hue, saturation, value (OpenCV's hue runs 0..180)
HSV_BINS = (8, 4, 4)
#: HOG: grey frame resized to this (width, height), square cells of HOG_CELL px, 9 bins over 0..180
HOG_SIZE = (144, 80)
HOG_CELL = 16
HOG_BINS = 9
#: HOF and MBH: orientation bins over 0..360 degrees, on a GRID x GRID split of the frame
FLOW_BINS = 8
GRID = 2
#: flow slower than this (pixels per frame at the working size) counts as still in HOF
STILL_PX = 0.5


def hsv_histogram(frame: np.ndarray) -> np.ndarray:
    """Joint HSV histogram (8 x 4 x 4 = 128 bins) of a BGR uint8 frame, summing to 1."""
    hsv = cv2.cvtColor(frame, cv2.COLOR_BGR2HSV)
    hist = cv2.calcHist([hsv], [0, 1, 2], None, list(HSV_BINS), [0, 180, 0, 256, 0, 256])
    hist = hist.ravel().astype(np.float64)
    return hist / max(hist.sum(), 1.0)


@functools.lru_cache(maxsize=16)
def _cell_map(h: int, w: int, rows: int, cols: int) -> np.ndarray:
    """Cell number of every pixel of an (h, w) image split into rows x cols equal cells (pixels
    past the last whole cell go to the last cell)."""
    r = np.minimum(np.arange(h) // max(h // rows, 1), rows - 1)
    c = np.minimum(np.arange(w) // max(w // cols, 1), cols - 1)
    out = (r[:, None] * cols + c[None, :]).astype(np.int64)
    out.flags.writeable = False
    return out


def _cell_histograms(angle: np.ndarray, weight: np.ndarray, bins: int, period: float,
                     rows: int, cols: int) -> np.ndarray:
    """Orientation histograms of a rows x cols grid of cells; shape (rows, cols, bins).

    Each pixel's weight is split linearly between the two nearest bin centres of its angle
    (degrees, taken modulo ``period``)."""
    cell = _cell_map(*angle.shape, rows, cols) * bins
    pos = angle * np.float32(bins / period) - np.float32(0.5)
    lo = np.floor(pos)
    frac = pos - lo
    lo_bin = lo.astype(np.int64) % bins
    hi_bin = lo_bin + 1
    hi_bin[hi_bin == bins] = 0
    n = rows * cols * bins
    whi = weight * frac
    out = (np.bincount((cell + lo_bin).ravel(), (weight - whi).ravel(), minlength=n)
           + np.bincount((cell + hi_bin).ravel(), whi.ravel(), minlength=n))
    return out.reshape(rows, cols, bins)


def _polar(gx: np.ndarray, gy: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Magnitude and angle in degrees (0..360) of float32 vectors."""
    return cv2.cartToPolar(gx, gy, angleInDegrees=True)


def _gradients(image: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Centred differences [-1, 0, 1] in x and y (zero on the border), float32."""
    img = image.astype(np.float32)
    gx = np.zeros_like(img)
    gy = np.zeros_like(img)
    gx[:, 1:-1] = img[:, 2:] - img[:, :-2]
    gy[1:-1, :] = img[2:, :] - img[:-2, :]
    return gx, gy


def hog(frame: np.ndarray) -> np.ndarray:
    """Histogram of oriented gradients (Dalal & Triggs 2005, CVPR, doi:10.1109/CVPR.2005.177),
    pooled over the four quarters of the frame.

    The grey frame is resized to 144 x 80; gradients by [-1, 0, 1]; unsigned orientation
    (0..180 degrees) in 9 bins with linear interpolation between bin centres, weighted by the
    gradient magnitude; 16 x 16 cells (9 x 5); blocks of 2 x 2 cells with a one-cell stride
    (8 x 4 blocks), each normalised by L2-Hys (L2, clip at 0.2, L2 again); then the blocks of
    each quarter (4 x 2 blocks) are averaged. Returns 4 * 36 = 144 values.

    Why pooled: with a few dozen labelled clips, the 1,152 values of the unpooled blocks let a
    linear classifier fit noise in the texture and drowned the 128 colour values (on the tests'
    colour-only data, colour was right for 0.88 of clips instead of 1.0 with pooled blocks).
    """
    grey = cv2.cvtColor(frame, cv2.COLOR_BGR2GRAY) if frame.ndim == 3 else frame
    small = cv2.resize(grey, HOG_SIZE, interpolation=cv2.INTER_AREA)
    mag, ang = _polar(*_gradients(small))
    cols, rows = HOG_SIZE[0] // HOG_CELL, HOG_SIZE[1] // HOG_CELL
    cells = _cell_histograms(ang, mag, HOG_BINS, 180.0, rows, cols).astype(np.float64)
    blocks = np.concatenate([cells[:-1, :-1], cells[:-1, 1:], cells[1:, :-1], cells[1:, 1:]],
                            axis=2)  # (rows - 1, cols - 1, 36)
    eps = 1e-3
    blocks = blocks / np.sqrt((blocks ** 2).sum(axis=2, keepdims=True) + eps ** 2)
    blocks = np.minimum(blocks, 0.2)
    blocks = blocks / np.sqrt((blocks ** 2).sum(axis=2, keepdims=True) + eps ** 2)
    br, bc = (rows - 1) // 2, (cols - 1) // 2
    quarters = blocks.reshape(2, br, 2, bc, 4 * HOG_BINS).mean(axis=(1, 3))
    return quarters.ravel()


def appearance(frame: np.ndarray) -> np.ndarray:
    """Appearance of one BGR frame: square-rooted HSV histogram (128) then pooled HOG (144)."""
    return np.concatenate([np.sqrt(hsv_histogram(frame)), hog(frame)])


APPEARANCE_DIMS = int(np.prod(HSV_BINS)) + 4 * 4 * HOG_BINS


def flow_engine() -> cv2.DISOpticalFlow:
    """Dense inverse search optical flow (Kroeger et al. 2016, ECCV, doi:10.1007/978-3-319-46493-0_29)
    with OpenCV's "fast" preset. Not thread-safe: one per thread."""
    return cv2.DISOpticalFlow.create(cv2.DISOPTICAL_FLOW_PRESET_FAST)


def dense_flow(prev: np.ndarray, nxt: np.ndarray, engine: cv2.DISOpticalFlow | None = None
               ) -> np.ndarray:
    """Flow from grey uint8 ``prev`` to ``nxt``: float32 (h, w, 2), ``[..., 0]`` = dx, ``[..., 1]`` = dy,
    so ``nxt[y + dy, x + dx] ~ prev[y, x]``."""
    if prev.shape != nxt.shape or prev.ndim != 2:
        raise ValueError(f"flow needs two grey frames of one size, got {prev.shape} and {nxt.shape}")
    return (engine or flow_engine()).calc(prev, nxt, None)


def hof(flow: np.ndarray) -> np.ndarray:
    """Histograms of optical flow (Dalal, Triggs & Schmid 2006, ECCV; Wang et al. 2013, IJCV):
    per cell of a 2 x 2 grid, 8 direction bins over 0..360 degrees weighted by flow magnitude for
    pixels moving at least 0.5 px, and a ninth "still" bin holding 0.5 x the number of slower
    pixels; each cell sums to 1. Returns 2 * 2 * 9 = 36 values."""
    mag, ang = _polar(np.ascontiguousarray(flow[..., 0]), np.ascontiguousarray(flow[..., 1]))
    moving = mag >= STILL_PX
    cells = _cell_histograms(ang, np.where(moving, mag, np.float32(0)), FLOW_BINS, 360.0, GRID, GRID)
    n_still = np.bincount(_cell_map(*mag.shape, GRID, GRID).ravel(), (~moving).ravel(),
                          minlength=GRID * GRID)
    out = np.concatenate([cells.reshape(GRID * GRID, FLOW_BINS),
                          STILL_PX * n_still[:, None]], axis=1).astype(np.float64)
    return (out / np.maximum(out.sum(axis=1, keepdims=True), 1e-12)).ravel()


def mbh(flow: np.ndarray) -> np.ndarray:
    """Motion boundary histograms (Dalal, Triggs & Schmid 2006): the spatial gradient of each
    flow component (x, then y) binned like HOF without the still bin, 8 directions weighted by
    gradient magnitude on a 2 x 2 grid, each cell summing to 1. Returns 2 * 2 * 2 * 8 = 64."""
    parts = []
    for comp in (flow[..., 0], flow[..., 1]):
        mag, ang = _polar(*_gradients(comp))
        cells = _cell_histograms(ang, mag, FLOW_BINS, 360.0, GRID, GRID).reshape(
            GRID * GRID, FLOW_BINS).astype(np.float64)
        parts.append(cells / np.maximum(cells.sum(axis=1, keepdims=True), 1e-12))
    return np.concatenate(parts).ravel()


def flow_summary(flow: np.ndarray) -> np.ndarray:
    """Mean dx, mean dy, mean speed and the share of pixels moving at least 0.5 px (4 values)."""
    u, v = flow[..., 0], flow[..., 1]
    mag = np.hypot(u, v)
    return np.array([u.mean(dtype=np.float64), v.mean(dtype=np.float64), mag.mean(dtype=np.float64),
                     (mag >= STILL_PX).mean()], dtype=np.float64)


def motion(flow: np.ndarray) -> np.ndarray:
    """Motion of one frame pair: square-rooted HOF (36), square-rooted MBH (64), flow summary (4)."""
    return np.concatenate([np.sqrt(hof(flow)), np.sqrt(mbh(flow)), flow_summary(flow)])


MOTION_DIMS = GRID * GRID * (FLOW_BINS + 1) + 2 * GRID * GRID * FLOW_BINS + 4
