"""The review desk with unlabelled segments (marked before their annotator chose a label):
shown on the annotator's track as "unlabelled", never copied into gold, and the lead is told."""

from clipscribe.ui.review.tracks import segment_text


def test_copying_a_track_leaves_unlabelled_segments_out_and_says_so(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    clip = desk.cmp.clip.id
    who = desk.cmp.annotators[0]
    theirs = p.segments(clip=clip, annotator=who)
    free = max([g.end for g in theirs], default=0)
    assert free + 6 <= desk.cmp.clip.frame_count
    p.add_segment(clip, who, None, free, free + 6)
    desk.refresh()                                       # re-read the clip
    track = dict(desk.tracks.tracks)[who]
    assert (None, free, free + 6) in track
    assert segment_text(None, free, free + 6) == f"unlabelled {free}–{free + 5}"
    desk.tracks.grab()                                   # the track paints it

    said: list[str] = []
    desk.status.connect(said.append)
    desk.copy_track(who)
    assert [(l, s, e) for _, l, s, e in p.gold_segments(clip)] == \
        sorted(((g.label, g.start, g.end) for g in theirs), key=lambda g: g[1])
    assert said[-1] == f"Copied {len(theirs)} of {who}'s segments to gold; 1 unlabelled left out"


def test_a_track_of_only_unlabelled_segments_copies_nothing(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    clip = desk.cmp.clip.id
    who = desk.cmp.annotators[0]
    desk.copy_track(desk.cmp.annotators[-1])            # some gold segments to keep
    gold = p.gold_segments(clip)
    for g in p.segments(clip=clip, annotator=who):
        p.delete_segment(g.id)
    p.add_segment(clip, who, None, 0, 5)
    desk.refresh()                                       # re-read the clip
    said: list[str] = []
    desk.status.connect(said.append)
    desk.copy_track(who)
    assert p.gold_segments(clip) == gold                 # not cleared by copying nothing
    assert said == [f"Nothing copied: {who}'s segments are all unlabelled"]
