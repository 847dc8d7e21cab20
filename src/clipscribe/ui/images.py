"""numpy BGR frames to QImage (no widgets)."""

from __future__ import annotations

import cv2
import numpy as np
from PySide6.QtGui import QImage


def bgr_to_qimage(frame: np.ndarray) -> QImage:
    """A deep-copied RGB888 QImage of a ``(h, w, 3)`` uint8 BGR frame.

    ``bytesPerLine`` is passed explicitly because rows of width ``3w`` are not 4-byte aligned,
    which QImage otherwise assumes. Safe to call on a worker thread (QImage, not QPixmap).
    """
    rgb = np.ascontiguousarray(cv2.cvtColor(frame, cv2.COLOR_BGR2RGB))
    h, w, _ = rgb.shape
    return QImage(rgb.data, w, h, rgb.strides[0], QImage.Format.Format_RGB888).copy()
