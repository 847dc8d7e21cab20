"""``clipscribe suggest``: train label suggestions from a project's labels and show them, or
compare the single-frame, appearance, motion and fused streams by grouped cross-validation."""

from __future__ import annotations

import argparse
import json
import math

from .common import Bar, open_project


def _clean(value):
    """JSON cannot hold NaN: an undefined number (a label never held out) becomes null."""
    if isinstance(value, float) and math.isnan(value):
        return None
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_clean(v) for v in value]
    return value


def _print_comparison(result) -> None:
    print(f"grouped cross-validation: {result.folds} folds, {result.clips} clips, "
          f"{result.groups} groups, labels: {', '.join(result.labels)}")
    print(f"{'stream':<14}{'accuracy':>10}{'95% interval':>18}{'macro-F1':>10}")
    for s, acc in result.accuracy.items():
        iv = result.intervals["accuracy"][s]
        print(f"{s:<14}{acc:>10.3f}{f'{iv.low:.3f}-{iv.high:.3f}':>18}{result.macro_f1[s]:>10.3f}")
    print(f"fusion weight: appearance {result.weight:.3f}, motion {1 - result.weight:.3f}")
    print("per label, share right (appearance / motion):")
    for lab in result.labels:
        a = result.per_class_accuracy["appearance"][lab]
        m = result.per_class_accuracy["motion"][lab]
        print(f"  {lab:<20} {a:.2f} / {m:.2f}{'   motion matters' if m - a >= 0.2 else ''}")
    for clip, reason in result.skipped.items():
        print(f"  skipped clip {clip}: {reason}")
    print(f"recipe: {result.recipe}")


def cmd_suggest(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        bar = None if args.json else Bar("clip features")
        if args.compare:
            result = p.compare_streams(folds=args.folds, seed=args.seed, progress=bar)
            if args.json:
                print(json.dumps(_clean(result.to_dict()), indent=2))
            else:
                _print_comparison(result)
            return 0
        model = p.train_suggester(progress=bar, seed=args.seed)
        rows = []
        for clip in p.clips():
            ranked = p.suggest(clip.id)
            rows.append({"clip": clip.id, "path": clip.path,
                         "suggestions": [[lab, round(prob, 4)] for lab, prob in ranked[:3]],
                         "reason": p.suggestion_reason(clip.id) if not ranked else ""})
        if args.json:
            print(json.dumps({"trained_on": model.trained_on, "labels": list(model.classes),
                              "fusion_weight": model.weight, "recipe": model.recipe,
                              "clips": rows}, indent=2))
            return 0
        print(f"trained on {model.trained_on} labelled clips; labels: {', '.join(model.classes)}")
        for r in rows:
            shown = ", ".join(f"{lab} {prob:.2f}" for lab, prob in r["suggestions"]) or r["reason"]
            print(f"{r['clip']:>6}  {r['path']:<40} {shown}")
    return 0


def register(add) -> None:
    sp = add("suggest", cmd_suggest,
             "learn label suggestions from the project's labels (appearance and motion of the "
             "clips) and list them, or compare the cues by grouped cross-validation")
    sp.add_argument("--compare", action="store_true",
                    help="compare single-frame, appearance, motion and fused by grouped "
                         "cross-validation instead of listing suggestions")
    sp.add_argument("--json", action="store_true", help="print JSON instead of text")
    sp.add_argument("--folds", type=int, default=5, help="folds of the comparison (default 5)")
    sp.add_argument("--seed", type=int, default=0, help="seed of the splits (default 0)")
