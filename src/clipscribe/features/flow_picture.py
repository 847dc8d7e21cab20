"""Pictures of optical flow, for looking at the motion a clip's motion stream sees: the flow
between a frame and the one before it, colour-coded by direction (hue) and strength
(brightness), and the matching colour wheel for a legend. numpy and OpenCV only.

Colour code: hue goes round with the direction of motion (0 degrees = to the right, angles
growing clockwise on screen because image y points down), brightness grows with the speed up to
``scale`` pixels per frame (then stays full); no motion is black. The code follows the idea of
the flow colour wheel of Baker et al. 2011 ("A Database and Evaluation Methodology for Optical
Flow", IJCV 92(1), doi:10.1007/s11263-010-0390-2), with brightness instead of saturation so a
still background stays dark and the picture shows through when blended.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

import cv2
import numpy as np

from .descriptors import dense_flow, flow_engine

#: flow is computed with frames scaled to this height (as the motion stream does)
FLOW_HEIGHT = 240


@dataclass(frozen=True)
class FlowPicture:
    """A flow picture of frame ``frame`` (from ``frame - 1``): BGR uint8 at the flow's size,
    and the speed in pixels per frame (of the full-size video) that shows at full brightness."""

    frame: int
    image: np.ndarray
    scale: float


def flow_colours(flow: np.ndarray, scale: float | None = None) -> tuple[np.ndarray, float]:
    """BGR uint8 picture of a flow field (h, w, 2) and the speed shown at full brightness
    (``scale``; default the 99th percentile of the speeds, at least 1 px)."""
    dx, dy = np.ascontiguousarray(flow[..., 0]), np.ascontiguousarray(flow[..., 1])
    mag, ang = cv2.cartToPolar(dx, dy, angleInDegrees=True)
    if scale is None:
        scale = max(1.0, float(np.percentile(mag, 99)))
    hsv = np.empty(flow.shape[:2] + (3,), np.uint8)
    hsv[..., 0] = (ang / 2).astype(np.uint8) % 180           # OpenCV hue is 0..179
    hsv[..., 1] = 255
    hsv[..., 2] = np.clip(mag / scale * 255, 0, 255).astype(np.uint8)
    return cv2.cvtColor(hsv, cv2.COLOR_HSV2BGR), float(scale)


def colour_wheel(size: int = 96) -> np.ndarray:
    """The legend: a disc whose colour at (x, y) from its centre is that of a flow of
    (x, y) with the rim at full speed; BGR uint8 (size, size, 3), black outside the disc."""
    r = (size - 1) / 2
    y, x = np.mgrid[0:size, 0:size].astype(np.float32)
    flow = np.dstack([(x - r) / r, (y - r) / r]).astype(np.float32)
    img, _ = flow_colours(flow, scale=1.0)
    img[np.hypot(x - r, y - r) > r] = 0
    return img


def flow_picture(path: str | os.PathLike, frame: int, *, video=None,
                 height: int = FLOW_HEIGHT) -> FlowPicture:
    """The flow picture of ``frame`` of the video at ``path`` (from ``frame - 1``; frame 0 is
    compared with itself, so it shows no motion). ``video``: an open Video to reuse."""
    from ..media import open_video
    own = video is None
    v = open_video(path) if own else video
    try:
        cur = v.frame(frame)
        prev = v.frame(frame - 1) if frame > 0 else cur
    finally:
        if own:
            v.close()
    h, w = cur.shape[:2]
    k = min(1.0, height / h)
    size = (max(1, round(w * k)), max(1, round(h * k)))
    grey = [cv2.cvtColor(cv2.resize(f, size, interpolation=cv2.INTER_AREA), cv2.COLOR_BGR2GRAY)
            for f in (prev, cur)]
    flow = dense_flow(grey[0], grey[1], flow_engine())
    image, scale = flow_colours(flow)
    return FlowPicture(frame, image, scale / k)
