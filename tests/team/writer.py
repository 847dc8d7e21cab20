"""A writer process for the concurrency tests and the benchmark: opens a project through the
façade as one person and makes ``n`` edits, printing one line per acknowledged (committed) edit.

usage: writer.py FOLDER USER PASSWORD N [hang]

Edit k is ``set_clip_label`` when k % 5 == 4 (label changes every time), else ``add_caption``
with the unique text ``USER/k``. With ``hang`` it then opens one more transaction, writes a
caption ``USER/in-flight``, prints ``in-flight`` and waits to be killed. The last line before
that is ``timing T0 T1`` (wall-clock seconds of the first and after the last edit).
"""

import sys
import time

from clipscribe import Project

LABELS = ("pick up", "put down", "stack")


def main() -> None:
    folder, user, password, n = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
    hang = len(sys.argv) > 5 and sys.argv[5] == "hang"
    out = sys.stdout
    with Project.open(folder, user=user, password=password or None) as p:
        clips = [c.id for c in p.clips()]
        out.write("ready\n")
        out.flush()
        t0 = time.time()
        for k in range(n):
            if k % 5 == 4:
                m = k // 5
                clip, label = clips[m % len(clips)], LABELS[m % len(LABELS)]
                p.set_clip_label(clip, user, label)
                out.write(f"label {clip} {label}\n")
            else:
                cid = p.add_caption(clips[k % len(clips)], user, f"{user}/{k}")
                out.write(f"caption {cid} {user}/{k}\n")
            out.flush()
        out.write(f"timing {t0!r} {time.time()!r}\n")
        out.flush()
        if hang:
            def stuck(s):
                p._add_caption(s, clips[0], user, f"{user}/in-flight", None, None)
                s.flush()
                out.write("in-flight\n")
                out.flush()
                time.sleep(600)
            p._write(stuck)


if __name__ == "__main__":
    main()
