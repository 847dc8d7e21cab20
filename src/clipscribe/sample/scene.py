"""Render the invented sample scene: a small two-link robot arm moving coloured blocks on a
workbench, seen from the side. Pure OpenCV drawing, deterministic from its parameters."""

from __future__ import annotations

import math
from dataclasses import dataclass

import cv2
import numpy as np

W, H = 320, 240
FPS = 15.0
BASE = (60, 200)          # shoulder joint (x, y) in pixels
LINKS = (95.0, 85.0)      # upper and lower arm lengths
TABLE_Y = 200
BLOCK = 22

COLOURS = {"red": (60, 60, 220), "blue": (200, 120, 40), "yellow": (40, 200, 230), "green": (80, 170, 60)}


@dataclass(frozen=True)
class Cell:
    """One workcell: the group key of its clips (same bench, light and camera)."""

    name: str
    bench: tuple[int, int, int]
    wall: tuple[int, int, int]
    arm: tuple[int, int, int]
    mirrored: bool = False          # camera on the other side of the bench
    decor: str = "none"             # on the wall: none | window | shelves | board | stripes | door
    zoom: float = 1.0               # camera zoom about the bench centre
    lift: int = 0                   # camera height: positive moves the scene down the picture


CELLS = (
    Cell("cell-north", (70, 110, 150), (210, 205, 195), (90, 90, 90)),
    Cell("cell-east", (60, 90, 110), (180, 200, 215), (120, 110, 100), mirrored=True, decor="window"),
    Cell("cell-south", (100, 120, 130), (200, 190, 170), (70, 80, 95), decor="shelves", zoom=1.35, lift=-10),
    Cell("cell-west", (80, 80, 100), (225, 220, 225), (110, 100, 130), mirrored=True, decor="board",
         zoom=1.15, lift=30),
    # the later workcells: more clips so label suggestions have something to learn from
    Cell("bay-1", (90, 100, 80), (190, 210, 200), (100, 100, 110), decor="stripes", zoom=1.1),
    Cell("bay-2", (120, 110, 90), (215, 200, 205), (80, 95, 85), mirrored=True, decor="door", lift=15),
    Cell("bay-3", (70, 95, 125), (200, 215, 190), (115, 105, 95), decor="window", zoom=1.25, lift=-5),
    Cell("bay-4", (95, 85, 115), (195, 195, 215), (95, 110, 120), mirrored=True, decor="board"),
)


@dataclass(frozen=True)
class Action:
    """What happens in a clip: the activity, the block moved, and its timing in frames."""

    label: str            # pick up | put down | push | stack | idle
    colour: str
    start: int            # first frame of the activity
    end: int              # frame after the last one
    x_from: float
    x_to: float
    other: str = "blue"   # the block stacked on, for "stack"


def _ik(x: float, y: float) -> tuple[tuple[int, int], tuple[int, int]]:
    """Elbow and wrist pixel positions reaching (x, y) (two-link inverse kinematics)."""
    dx, dy = x - BASE[0], BASE[1] - y
    d = min(math.hypot(dx, dy), LINKS[0] + LINKS[1] - 1e-3)
    a = math.atan2(dy, dx)
    cos_b = (LINKS[0] ** 2 + d ** 2 - LINKS[1] ** 2) / (2 * LINKS[0] * d)
    b = math.acos(max(-1.0, min(1.0, cos_b)))
    ex = BASE[0] + LINKS[0] * math.cos(a + b)
    ey = BASE[1] - LINKS[0] * math.sin(a + b)
    return (int(ex), int(ey)), (int(x), int(y))


def _ease(t: float) -> float:
    t = max(0.0, min(1.0, t))
    return t * t * (3 - 2 * t)


def _state(act: Action, f: int) -> tuple[float, float, float, float, bool]:
    """Gripper (x, y) and moved block (x, y, held) at frame f."""
    top = TABLE_Y - BLOCK
    rest_x, rest_y = 150.0, 95.0
    t = (f - act.start) / max(1, act.end - act.start)
    if act.label == "idle" or f < act.start or f >= act.end:
        done = f >= act.end and act.label != "idle"
        bx = act.x_to if done else act.x_from
        by = _resting_y(act, done)
        if act.label == "pick up" and done:
            return rest_x, rest_y + 10, rest_x, rest_y + 10 + BLOCK / 2, True
        if act.label == "put down" and not done:
            return rest_x, rest_y + 10, rest_x, rest_y + 10 + BLOCK / 2, True
        sway = 4 * math.sin(f / 6.0)
        return rest_x + sway, rest_y + sway / 2, bx, by, False
    if act.label == "push":
        gx = act.x_from - BLOCK + (act.x_to - act.x_from) * _ease(t)
        reach = _ease(min(1.0, t * 4))
        gy = rest_y + (top + BLOCK / 2 - rest_y) * reach
        bx = max(act.x_from, gx + BLOCK) if t > 0.25 else act.x_from
        return gx, gy, bx, top, False
    if act.label in ("pick up", "stack"):
        if t < 0.4:  # reach down
            k = _ease(t / 0.4)
            return (rest_x + (act.x_from - rest_x) * k, rest_y + (top - 2 - rest_y) * k,
                    act.x_from, top, False)
        k = _ease((t - 0.4) / 0.6)
        tx = rest_x if act.label == "pick up" else act.x_to
        ty = rest_y + 10 if act.label == "pick up" else top - BLOCK - 2
        gx, gy = act.x_from + (tx - act.x_from) * k, top - 2 + (ty - top + 2) * k
        return gx, gy, gx, gy + BLOCK / 2 + 2, True
    # put down: from the rest pose down to the table
    k = _ease(t / 0.7) if t < 0.7 else 1.0
    gx, gy = rest_x + (act.x_to - rest_x) * k, rest_y + 10 + (top - 2 - rest_y - 10) * k
    if t < 0.7:
        return gx, gy, gx, gy + BLOCK / 2 + 2, True
    lift = _ease((t - 0.7) / 0.3)
    return gx, gy - 30 * lift, act.x_to, top, False


def _resting_y(act: Action, done: bool) -> float:
    top = TABLE_Y - BLOCK
    return top - BLOCK if (act.label == "stack" and done) else top


def render(cell: Cell, act: Action, n_frames: int, seed: int) -> list[np.ndarray]:
    """All frames of one clip (BGR uint8, H x W x 3)."""
    rng = np.random.default_rng(seed)
    noise = rng.integers(0, 6, size=(H, W, 1), dtype=np.uint8)
    frames = []
    for f in range(n_frames):
        img = np.empty((H, W, 3), np.uint8)
        img[:] = cell.wall
        _decorate(img, cell)
        img[TABLE_Y:] = cell.bench
        cv2.line(img, (0, TABLE_Y), (W, TABLE_Y), tuple(int(c * 0.6) for c in cell.bench), 2)
        gx, gy, bx, by, _held = _state(act, f)
        # the still block (stack target or a bystander)
        other_x = act.x_to if act.label == "stack" else 270
        _block(img, other_x, TABLE_Y - BLOCK, COLOURS[act.other])
        _block(img, bx, by, COLOURS[act.colour])
        elbow, wrist = _ik(gx, gy - 8)
        cv2.rectangle(img, (BASE[0] - 18, BASE[1]), (BASE[0] + 18, TABLE_Y + 8), cell.arm, -1)
        cv2.line(img, BASE, elbow, cell.arm, 9, cv2.LINE_AA)
        cv2.line(img, elbow, wrist, cell.arm, 7, cv2.LINE_AA)
        cv2.circle(img, elbow, 6, (40, 40, 40), -1, cv2.LINE_AA)
        cv2.line(img, (wrist[0] - 9, wrist[1]), (wrist[0] - 9, wrist[1] + 10), (30, 30, 30), 3)
        cv2.line(img, (wrist[0] + 9, wrist[1]), (wrist[0] + 9, wrist[1] + 10), (30, 30, 30), 3)
        if cell.mirrored:
            img = np.ascontiguousarray(img[:, ::-1])
        if cell.zoom != 1.0 or cell.lift:
            m = cv2.getRotationMatrix2D((W / 2, TABLE_Y), 0.0, cell.zoom)
            m[1, 2] += cell.lift
            img = cv2.warpAffine(img, m, (W, H), borderMode=cv2.BORDER_REPLICATE)
        img = cv2.add(img, np.broadcast_to(noise, img.shape).copy())
        frames.append(img)
    return frames


def _decorate(img: np.ndarray, cell: Cell) -> None:
    """Wall fittings that tell the workcells apart (and keep their fingerprints apart)."""
    dark = tuple(int(c * 0.45) for c in cell.wall)
    if cell.decor == "window":
        cv2.rectangle(img, (150, 15), (300, 120), (235, 225, 200), -1)
        cv2.rectangle(img, (150, 15), (300, 120), dark, 4)
        cv2.line(img, (225, 15), (225, 120), dark, 3)
    elif cell.decor == "shelves":
        for y in (40, 85, 130):
            cv2.rectangle(img, (170, y), (318, y + 7), dark, -1)
    elif cell.decor == "board":
        cv2.rectangle(img, (0, 0), (110, 150), dark, -1)
        for x in range(10, 110, 20):
            for y in range(10, 150, 20):
                cv2.circle(img, (x, y), 2, cell.wall, -1)
    elif cell.decor == "stripes":
        for y in (10, 95):
            cv2.rectangle(img, (0, y), (W, y + 40), dark, -1)
    elif cell.decor == "door":
        cv2.rectangle(img, (200, 20), (270, 200), dark, -1)
        cv2.circle(img, (260, 115), 4, cell.wall, -1)


def _block(img: np.ndarray, x: float, y: float, colour: tuple[int, int, int]) -> None:
    x0, y0 = int(x - BLOCK / 2), int(y)
    cv2.rectangle(img, (x0, y0), (x0 + BLOCK, y0 + BLOCK), colour, -1)
    cv2.rectangle(img, (x0, y0), (x0 + BLOCK, y0 + BLOCK), tuple(int(c * 0.5) for c in colour), 1)


def write_clip(path: str, frames: list[np.ndarray], fps: float = FPS) -> None:
    fourcc = cv2.VideoWriter_fourcc(*"mp4v")  # type: ignore[attr-defined]
    out = cv2.VideoWriter(path, fourcc, fps, (W, H))
    if not out.isOpened():
        raise RuntimeError(f"{path}: OpenCV cannot write MPEG-4 video here")
    for img in frames:
        out.write(img)
    out.release()
