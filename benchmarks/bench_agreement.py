"""Agreement engine timings, side by side with the reference libraries on the same data.

Prints one JSON object. Run: PYTHONPATH=src .venv/bin/python benchmarks/bench_agreement.py
Options: --quick (smaller sizes for a smoke run), --sacrebleu-clips N (LOO reference subset).
Timings are the best of several runs (one run for leave-one-out BLEU); the machine is shared,
so ratios from the same run are the numbers to read.
Goals (docs/architecture.md, "Budgets"): equal to 1e-9, never slower than the reference,
leave-one-out BLEU >= 5x faster than sacrebleu, the label part of the report on 100k clips x 5
annotators < 1 s, Dawid-Skene on 50k clips x 5 annotators <= 0.5 x crowd-kit (same start, same
stopping rule, so the same number of rounds), leave-one-out ROUGE-L and chrF beside rouge-score
and sacrebleu doing the same caption by caption.
"""

from __future__ import annotations

import argparse
import itertools
import json
import time

import numpy as np


def best_of(fn, repeat: int):
    times, out = [], None
    for _ in range(repeat):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def bench_fleiss(n_items: int, repeat: int) -> dict:
    from statsmodels.stats.inter_rater import fleiss_kappa as sm_fleiss

    from clipscribe.agreement import fleiss_kappa

    rng = np.random.default_rng(1)
    truth = rng.integers(0, 5, n_items)
    ratings = np.where(rng.random((n_items, 5)) < 0.6, truth[:, None], rng.integers(0, 5, (n_items, 5)))
    table = np.stack([(ratings == k).sum(axis=1) for k in range(5)], axis=1)
    t_ours, ours = best_of(lambda: fleiss_kappa(table), repeat)
    t_ref, ref = best_of(lambda: sm_fleiss(table), repeat)
    return {"items": n_items, "raters": 5, "ours_s": t_ours, "statsmodels_s": t_ref,
            "speedup": t_ref / t_ours, "abs_diff": abs(float(ours) - float(ref))}


def bench_alpha(n_units: int, repeat: int) -> dict:
    import krippendorff

    from clipscribe.agreement import krippendorff_alpha

    rng = np.random.default_rng(2)
    truth = rng.integers(0, 5, n_units)
    data = np.where(rng.random((5, n_units)) < 0.6, truth, rng.integers(0, 5, (5, n_units)))
    data = data.astype(float)
    data[rng.random(data.shape) < 0.3] = np.nan
    out = {"units": n_units, "raters": 5, "missing": 0.3}
    for level in ("nominal", "ordinal", "interval"):
        t_ours, ours = best_of(lambda: krippendorff_alpha(data, level=level), repeat)
        t_ref, ref = best_of(lambda: krippendorff.alpha(reliability_data=data,
                                                         level_of_measurement=level), repeat)
        out[level] = {"ours_s": t_ours, "krippendorff_s": t_ref, "speedup": t_ref / t_ours,
                      "abs_diff": abs(float(ours) - float(ref))}
    return out


def make_captions(n_clips: int, per_clip: int, seed: int = 3) -> dict:
    rng = np.random.default_rng(seed)
    vocab = np.array([f"w{i}" for i in range(3000)])
    zipf = 1.0 / np.arange(1, len(vocab) + 1)
    zipf /= zipf.sum()
    glue = ["a", "the", "is", "on", "in", "with", "and", "of", "to", ",", "."]
    data = {}
    for c in range(n_clips):
        topic = list(rng.choice(vocab, size=6, p=zipf))
        caps = []
        for k in range(per_clip):
            n = int(rng.integers(6, 16))
            words = [topic[i] if rng.random() < 0.5 else
                     (glue[int(rng.integers(len(glue)))] if rng.random() < 0.5 else
                      vocab[int(rng.choice(len(vocab), p=zipf))]) for i in rng.integers(0, 6, n)]
            caps.append((f"annotator-{k}", " ".join(words)))
        data[f"clip-{c}"] = caps
    return data


def sacrebleu_per_annotator(data: dict) -> dict:
    import sacrebleu

    names = sorted({a for caps in data.values() for a, _ in caps})
    out = {}
    for name in names:
        hyps, refs = [], []
        for caps in data.values():
            others = [t for a, t in caps if a != name]
            for a, t in caps:
                if a == name and others:
                    hyps.append(t)
                    refs.append(others)
        width = max(len(r) for r in refs)
        streams = [[r[k] if k < len(r) else None for r in refs] for k in range(width)]
        out[name] = sacrebleu.corpus_bleu(hyps, streams, smooth_method="none").score
    return out


def bench_loo(n_clips: int, sacre_clips: int) -> dict:
    from clipscribe.agreement import leave_one_out_bleu

    data = make_captions(n_clips, 5)
    t_ours, res = best_of(lambda: leave_one_out_bleu(data), 1)
    sub = dict(itertools.islice(data.items(), sacre_clips))
    t_ref, ref = best_of(lambda: sacrebleu_per_annotator(sub), 1)
    res_sub = leave_one_out_bleu(sub)
    diff = max(abs(res_sub.per_annotator[k].score - v) for k, v in ref.items())
    t_ref_full = t_ref * n_clips / sacre_clips
    return {"clips": n_clips, "captions_per_clip": 5, "ours_s": t_ours,
            "sacrebleu_clips_timed": sacre_clips, "sacrebleu_s": t_ref,
            "sacrebleu_full_s": t_ref_full,
            "sacrebleu_extrapolated": sacre_clips < n_clips,
            "speedup": t_ref_full / t_ours, "abs_diff_per_annotator": diff,
            "overall_bleu": res.overall.score}


def bench_dawid_skene(n_items: int, repeat: int) -> dict:
    import pandas as pd
    from crowdkit.aggregation import DawidSkene, OneCoinDawidSkene

    from clipscribe.agreement import dawid_skene

    rng = np.random.default_rng(5)
    k, m = 6, 5
    labels = np.array(["pick up", "put down", "stack", "pour", "wipe", "open"])
    truth = rng.integers(0, k, n_items)
    acc = np.array([0.9, 0.8, 0.7, 0.6, 0.75])
    right = rng.random((m, n_items)) < acc[:, None]
    codes = np.where(right, truth, rng.integers(0, k, (m, n_items)))
    items = np.array([f"clip-{i}" for i in range(n_items)], dtype=object)
    names = [f"annotator-{a + 1}" for a in range(m)]
    rows = [(items[i], names[a], labels[codes[a, i]]) for a in range(m) for i in range(n_items)]
    frame = pd.DataFrame(rows, columns=["task", "worker", "label"])
    out = {"items": n_items, "annotators": m, "labels": k}
    for model, cls in (("full", DawidSkene), ("one-coin", OneCoinDawidSkene)):
        t_ours, ours = best_of(lambda: dawid_skene(rows, model=model), repeat)
        t_ref, ref = best_of(lambda: cls(n_iter=100, tol=1e-5).fit(frame), repeat)
        probas = ref.probas_.loc[ours.items, ours.label_order].to_numpy()
        out[model] = {"ours_s": t_ours, "crowdkit_s": t_ref, "speedup": t_ref / t_ours,
                      "goal_speedup": 2.0, "meets_goal": t_ref / t_ours >= 2.0,
                      "rounds_ours": ours.iterations, "rounds_crowdkit": len(ref.loss_history_),
                      "max_abs_diff_posterior": float(np.abs(probas - ours.posterior_matrix).max())}
    return out


def bench_overlap(n_clips: int, ref_clips: int) -> dict:
    import sacrebleu
    from rouge_score import rouge_scorer

    from clipscribe.agreement import leave_one_out_chrf, leave_one_out_rouge_l

    data = make_captions(n_clips, 5)
    sub = dict(itertools.islice(data.items(), ref_clips))
    scorer = rouge_scorer.RougeScorer(["rougeL"])

    def by_annotator(d):
        hyps, refs = {}, {}
        for caps in d.values():
            for a, t in caps:
                others = [u for b, u in caps if b != a]
                if others:
                    hyps.setdefault(a, []).append(t)
                    refs.setdefault(a, []).append(others)
        return hyps, refs

    def rouge_ref():
        hyps, refs = by_annotator(sub)
        return {a: float(np.mean([scorer.score_multi(r, h)["rougeL"].fmeasure
                                  for h, r in zip(hyps[a], refs[a])])) for a in hyps}

    def chrf_ref():
        hyps, refs = by_annotator(sub)
        out = {}
        for a in hyps:
            width = max(map(len, refs[a]))
            streams = [[r[j] if j < len(r) else None for r in refs[a]] for j in range(width)]
            out[a] = sacrebleu.metrics.CHRF().corpus_score(hyps[a], streams).score
        return out

    result = {"clips": n_clips, "captions_per_clip": 5, "reference_clips_timed": ref_clips,
              "reference_extrapolated": ref_clips < n_clips}
    for name, ours_fn, ref_fn, lib in (("rouge_l", leave_one_out_rouge_l, rouge_ref, "rouge_score"),
                                       ("chrf", leave_one_out_chrf, chrf_ref, "sacrebleu")):
        t_ours, _ = best_of(lambda: ours_fn(data), 1)
        t_ref, ref = best_of(ref_fn, 1)
        ours_sub = ours_fn(sub)
        diff = max(abs(ours_sub.per_annotator[a] - v) for a, v in ref.items())
        t_full = t_ref * n_clips / ref_clips
        result[name] = {"ours_s": t_ours, f"{lib}_s": t_ref, f"{lib}_full_s": t_full,
                        "speedup": t_full / t_ours, "abs_diff_per_annotator": diff}
    return result


def bench_report(n_clips: int, n_boot: int) -> dict:
    import krippendorff
    from sklearn.metrics import cohen_kappa_score
    from statsmodels.stats.inter_rater import fleiss_kappa as sm_fleiss

    from clipscribe.agreement import agreement_report

    rng = np.random.default_rng(4)
    labels = ["stack", "pour", "cut", "wipe", "open", "close"]
    truth = rng.integers(0, len(labels), n_clips)
    codes = np.where(rng.random((5, n_clips)) < 0.7, truth, rng.integers(0, len(labels), (5, n_clips)))
    names = [f"annotator-{k}" for k in range(5)]
    rows = [(c, names[a], labels[codes[a, c]]) for a in range(5) for c in range(n_clips)]
    t_ours, rep = best_of(lambda: agreement_report(rows, n_boot=n_boot, reliability=False), 3)
    t_rel, _ = best_of(lambda: agreement_report(rows, n_boot=n_boot), 1)

    def reference():
        alpha = krippendorff.alpha(reliability_data=codes.astype(float),
                                   level_of_measurement="nominal")
        table = np.stack([(codes == k).sum(axis=0) for k in range(len(labels))], axis=1)
        fleiss = sm_fleiss(table)
        kappas = [cohen_kappa_score(codes[i], codes[j]) for i in range(5) for j in range(i + 1, 5)]
        return alpha, fleiss, kappas

    t_ref, (alpha, fleiss, kappas) = best_of(reference, 3)

    def reference_same_work(n_replicates):
        # the same results by the obvious route: rows -> matrix, package calls for every number,
        # bootstrap by resampling clips and calling the package again per replicate
        from sklearn.metrics import confusion_matrix

        ci, ai = {}, {}
        m = np.full((5, n_clips), np.nan)
        for clip, ann, lab in rows:
            m[ai.setdefault(ann, len(ai)), ci.setdefault(clip, len(ci))] = labels.index(lab)
        binaries = [np.where(np.isnan(m), np.nan, (m == k).astype(float)) for k in range(6)]
        for x in [m, *binaries]:
            krippendorff.alpha(reliability_data=x, level_of_measurement="nominal")
        sm_fleiss(np.stack([(m == k).sum(axis=0) for k in range(6)], axis=1))
        for i in range(5):
            for j in range(i + 1, 5):
                cohen_kappa_score(m[i], m[j])
                confusion_matrix(m[i], m[j])
        rng = np.random.default_rng(0)
        for _ in range(n_replicates):
            idx = rng.integers(0, n_clips, n_clips)
            for x in [m, *binaries]:
                krippendorff.alpha(reliability_data=x[:, idx], level_of_measurement="nominal")

    t_point, _ = best_of(lambda: reference_same_work(0), 1)
    t_ten, _ = best_of(lambda: reference_same_work(10), 1)
    t_same = t_point + (t_ten - t_point) * n_boot / 10
    t_one, _ = best_of(lambda: agreement_report(rows, n_boot=1, reliability=False), 3)
    lab = rep.labels
    diff = max(abs(float(lab.alpha) - alpha), abs(float(lab.fleiss) - fleiss),
               *(abs(float(p.kappa) - k) for p, k in zip(lab.pairs, kappas)))
    t_text, _ = best_of(lambda: (rep.to_dict(), rep.to_text()), 1)
    return {"clips": n_clips, "annotators": 5, "n_boot": n_boot,
            "ours_label_part_s": t_ours,
            "ours_with_reliability_s": t_rel,
            "reliability_includes": "Dawid-Skene inferred labels and confusion (full model)",
            "ours_includes": "parse rows, alpha + 95% CI, per-label alpha + CI, Fleiss, "
                             "10 Cohen pairs + confusion, per-clip disagreement",
            "reference_s": t_ref,
            "reference_includes": "krippendorff.alpha + statsmodels Fleiss + 10 x sklearn "
                                  "cohen_kappa_score on ready arrays, no CIs",
            "ratio_reference_over_ours": t_ref / t_ours,
            "reference_same_work_s": t_same,
            "reference_same_work_includes": "rows parsed in a loop, krippendorff.alpha overall and "
                                            "per label, statsmodels Fleiss, 10 sklearn kappas and "
                                            f"confusion matrices, {n_boot} bootstrap replicates "
                                            "(10 timed, extrapolated)",
            "reference_same_work_extrapolated": True,
            "reference_same_work_no_ci_s": t_point,
            "ours_with_1_replicate_s": t_one,
            "ratio_no_ci_over_ours_1_replicate": t_point / t_one,
            "ratio_same_work_over_ours": t_same / t_ours,
            "to_dict_and_text_s": t_text,
            "abs_diff": diff, "budget_s": 1.0, "within_budget": t_ours < 1.0}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--sacrebleu-clips", type=int, default=None)
    ap.add_argument("--only", default=None, help="comma-separated parts to run, e.g. dawid_skene")
    args = ap.parse_args()
    q = args.quick
    n_loo = 2000 if q else 20_000
    parts = {
        "fleiss": lambda: bench_fleiss(100_000 if q else 1_000_000, 7),
        "krippendorff_alpha": lambda: bench_alpha(10_000 if q else 100_000, 7),
        "leave_one_out_bleu": lambda: bench_loo(n_loo, args.sacrebleu_clips or n_loo),
        "report_labels": lambda: bench_report(10_000 if q else 100_000, 1000),
        "dawid_skene": lambda: bench_dawid_skene(5_000 if q else 50_000, 3),
        "leave_one_out_rouge_chrf": lambda: bench_overlap(500 if q else 5_000,
                                                          500 if q else 1_000),
    }
    wanted = args.only.split(",") if args.only else list(parts)
    result = {name: parts[name]() for name in wanted}
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
