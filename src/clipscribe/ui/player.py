"""Playback: the playhead, play/pause, steps, speed and segment loop, over a FrameLoader."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QObject, QSize, Qt, QTimer, Signal, Slot
from PySide6.QtGui import QImage
from PySide6.QtWidgets import QComboBox, QHBoxLayout, QLabel, QToolButton, QWidget

from .workers import FrameLoader

SPEEDS = (0.25, 0.5, 1.0, 1.5, 2.0)


class Player(QObject):
    playheadMoved = Signal(int)         # the frame the playhead is on
    frameShown = Signal(int, QImage)    # a decoded frame arrived
    stateChanged = Signal()             # playing, speed or loop changed
    failed = Signal(str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.loader: FrameLoader | None = None
        self.frame = 0
        self.frame_count = 1
        self.fps = 25.0
        self.speed = 1.0
        self.loop: tuple[int, int] | None = None  # [start, end) frames
        self.timer = QTimer(self)
        self.timer.setTimerType(Qt.TimerType.PreciseTimer)
        self.timer.timeout.connect(self._tick)

    @property
    def playing(self) -> bool:
        return self.timer.isActive()

    def open(self, path: Path, frame_count: int, fps: float, frame: int = 0) -> None:
        self.close()
        self.frame_count, self.fps = max(1, frame_count), fps if fps > 0 else 25.0
        self.frame = min(max(0, frame), self.frame_count - 1)
        self.loop = None
        self.loader = FrameLoader(path)
        self.loader.frameReady.connect(self.frameShown)
        self.loader.failed.connect(self.failed)
        self.loader.start()
        self.loader.request(self.frame)
        self.playheadMoved.emit(self.frame)
        self.stateChanged.emit()

    def close(self) -> None:
        self.timer.stop()
        if self.loader is not None:
            self.loader.frameReady.disconnect()
            self.loader.stop()
            self.loader.deleteLater()
            self.loader = None

    @Slot(int)
    def seek(self, frame: int) -> None:
        frame = min(max(0, int(frame)), self.frame_count - 1)
        if self.loader is None:
            return
        self.frame = frame
        self.loader.request(frame, playing=self.playing)
        self.playheadMoved.emit(frame)

    def step(self, frames: int) -> None:
        self.pause()
        self.seek(self.frame + frames)

    def step_seconds(self, seconds: float) -> None:
        self.step(round(seconds * self.fps))

    @Slot()
    def toggle(self) -> None:
        self.pause() if self.playing else self.play()

    def play(self) -> None:
        if self.loader is None:
            return
        if self.loop is None and self.frame >= self.frame_count - 1:
            self.seek(0)
        self._set_interval()
        self.timer.start()
        self.stateChanged.emit()

    def pause(self) -> None:
        if self.playing:
            self.timer.stop()
            self.stateChanged.emit()

    def set_speed(self, speed: float) -> None:
        self.speed = speed
        self._set_interval()
        self.stateChanged.emit()

    def change_speed(self, step: int) -> None:
        i = min(range(len(SPEEDS)), key=lambda k: abs(SPEEDS[k] - self.speed))
        self.set_speed(SPEEDS[min(len(SPEEDS) - 1, max(0, i + step))])

    def set_loop(self, span: tuple[int, int] | None) -> None:
        self.loop = span
        if span is not None:
            self.seek(span[0])
            self.play()
        self.stateChanged.emit()

    def _set_interval(self) -> None:
        self.timer.setInterval(max(1, round(1000 / (self.fps * self.speed))))

    @Slot()
    def _tick(self) -> None:
        nxt = self.frame + 1
        if self.loop is not None:
            a, b = self.loop
            if not a <= nxt < b:
                nxt = a
        elif nxt >= self.frame_count:
            self.pause()
            return
        self.seek(nxt)


class TransportBar(QWidget):
    """Buttons bound to the window's actions, the speed box and the frame/time readout."""

    def __init__(self, player: Player, actions: list, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.player = player
        lay = QHBoxLayout(self)
        lay.setContentsMargins(4, 2, 4, 2)
        for action in actions:
            b = QToolButton()
            b.setDefaultAction(action)
            b.setFocusPolicy(Qt.FocusPolicy.NoFocus)
            lay.addWidget(b)
        self.speed = QComboBox()
        self.speed.setToolTip("Playback speed (- slower, = faster)")
        self.speed.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        for s in SPEEDS:
            self.speed.addItem(f"{s:g}×", s)
        self.speed.setCurrentIndex(SPEEDS.index(1.0))
        self.speed.activated.connect(lambda i: player.set_speed(self.speed.itemData(i)))
        lay.addWidget(self.speed)
        lay.addStretch(1)
        self.readout = FittingLabel()
        self.readout.setObjectName("readout")
        self.readout.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        lay.addWidget(self.readout)
        player.playheadMoved.connect(self.show_position)
        player.stateChanged.connect(self._state)

    @Slot(int)
    def show_position(self, frame: int) -> None:
        p = self.player
        t = frame / p.fps
        total = p.frame_count / p.fps
        last = p.frame_count - 1
        self.readout.set_forms([f"frame {frame} / {last}    {_clock(t)} / {_clock(total)}",
                                f"{frame} / {last}  {_clock(t)}", f"{frame}"])

    @Slot()
    def _state(self) -> None:
        i = self.speed.findData(self.player.speed)
        if i >= 0:
            self.speed.setCurrentIndex(i)


class FittingLabel(QLabel):
    """A label given its text in several forms, longest first, that shows the longest form its
    width holds (the whole of it in the tooltip), so a narrow window shortens the readout
    instead of cutting it mid-number."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self._forms: list[str] = [""]

    def set_forms(self, forms: list[str]) -> None:
        changed = len(forms[0]) != len(self._forms[0])
        self._forms = forms
        self.setToolTip(forms[0])
        self._fit()
        if changed:
            self.updateGeometry()

    def _fit(self) -> None:
        room = self.contentsRect().width()
        fm = self.fontMetrics()
        self.setText(next((f for f in self._forms if fm.horizontalAdvance(f) <= room), self._forms[-1]))

    def sizeHint(self) -> QSize:
        return self._hint(self._forms[0])

    def minimumSizeHint(self) -> QSize:
        return self._hint(self._forms[-1])

    def _hint(self, text: str) -> QSize:
        m = self.contentsMargins()
        return QSize(self.fontMetrics().horizontalAdvance(text) + m.left() + m.right() + 2,
                     super().sizeHint().height())

    def resizeEvent(self, event) -> None:
        super().resizeEvent(event)
        self._fit()


def _clock(seconds: float) -> str:
    m, s = divmod(seconds, 60)
    return f"{int(m)}:{s:06.3f}"
