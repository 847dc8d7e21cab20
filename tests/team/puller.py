"""A person pulling clips until none are left: ``next_clip`` then submit, printing each clip id.

usage: puller.py FOLDER USER PASSWORD
"""

import sys

from clipscribe import Project


def main() -> None:
    folder, user, password = sys.argv[1], sys.argv[2], sys.argv[3]
    with Project.open(folder, user=user, password=password or None) as p:
        while (clip := p.next_clip()) is not None:
            p.set_clip_label(clip, user, "stack")
            p.set_clip_state(clip, user, "submitted")
            print(clip, flush=True)


if __name__ == "__main__":
    main()
