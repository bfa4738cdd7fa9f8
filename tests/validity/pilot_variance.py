"""Study: the interval of a pilot's paired with-minus-without difference, three ways.

A (acquest today): R repeats of a stratified 70/30 split, the paired differences' mean with the
  Nadeau-Bengio corrected t interval, variance s^2 (1/R + n_test/n_train).
B (test every row): R' repeats of K-fold cross-fitting; per-row paired differences averaged over
  the repeats; interval mean +- z sqrt(var_i / n) (Bayle, Bayle, Janson, Mackey 2020, CLT for
  cross-validation). For EOD: per-positive-row prediction differences by group (delta method).
C (folds as samples): the same folds, each fold's paired difference one value; the mean over all
  folds, its interval t_{K-1} sd / sqrt(K) (the repeats reuse the rows, so K, not K x repeats).

Truth: the expected difference for models trained on the same number of rows as each method's
training part, from 60 training samples of a population part, tested on a large disjoint part.
Adult (../shared/data/adult, see its PROVENANCE.md); scikit-learn 1.9.1 LogisticRegression,
numpy 2.4.6, scipy 1.17.1. Usage: python pilot_variance.py SEED PILOT_ROWS PILOTS
(the figures in docs/validity.md: 11 2000 60, about 6 minutes). Not run by CI.
"""
import sys
import numpy as np
from scipy import stats
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold

cols = "age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income".split(",")
rows = [l.strip().split(", ") for l in open(__import__("pathlib").Path(__file__).resolve().parents[2] / "../shared/data/adult/adult.data") if l.count(",") == 14]
data = {c: [r[i] for r in rows] for i, c in enumerate(cols)}
y = np.array([v.startswith(">50K") for v in data["income"]])
female = np.array([v == "Female" for v in data["sex"]])
numeric = ["age", "education-num", "capital-gain", "capital-loss", "hours-per-week"]
categorical = ["workclass", "marital-status", "relationship", "race", "native-country"]


def onehot(name):
    values = np.array(data[name])
    levels = sorted(set(values))
    return np.stack([values == l for l in levels], axis=1).astype(float)


base = np.hstack([np.stack([np.array(data[c], float) for c in numeric], axis=1)] + [onehot(c) for c in categorical])
base[:, :5] = (base[:, :5] - base[:, :5].mean(0)) / base[:, :5].std(0)
cand = np.hstack([base, onehot("occupation")])
N = len(y)
rng = np.random.default_rng(int(sys.argv[1]) if len(sys.argv) > 1 else 7)
perm = rng.permutation(N)
test_pop, train_pop = perm[:12000], perm[12000:]


def fit_predict(X, tr, te):
    m = LogisticRegression(max_iter=300, C=1.0)
    m.fit(X[tr], y[tr])
    return m.predict(X[te])


def eod(pred, idx):
    pos = y[idx]
    f, m = pos & female[idx], pos & ~female[idx]
    return pred[f].mean() - pred[m].mean()


def truth(m, draws=60):
    acc, fair = [], []
    for _ in range(draws):
        tr = rng.choice(train_pop, m, replace=False)
        pw, po = fit_predict(cand, tr, test_pop), fit_predict(base, tr, test_pop)
        acc.append(((pw == y[test_pop]).mean() - (po == y[test_pop]).mean()))
        # unfairness |EOD|: with minus without
        fair.append(abs(eod(pw, test_pop)) - abs(eod(po, test_pop)))
    return np.mean(acc), np.mean(fair)


n_pilot = int(sys.argv[2]) if len(sys.argv) > 2 else 2000
pilots = int(sys.argv[3]) if len(sys.argv) > 3 else 100
R, K, RK = 10, 5, 2
truth_a = truth(int(round(0.7 * n_pilot)))
truth_b = truth(int(round((K - 1) / K * n_pilot)))
z = stats.norm.ppf(0.9)
res = {"A": [], "B": [], "C": []}
for p in range(pilots):
    pilot = rng.choice(train_pop, n_pilot, replace=False)
    # A: repeated 70/30 splits
    da, df = [], []
    for r in range(R):
        idx = rng.permutation(pilot)
        cut = int(0.3 * n_pilot)
        te, tr = idx[:cut], idx[cut:]
        pw, po = fit_predict(cand, tr, te), fit_predict(base, tr, te)
        da.append((pw == y[te]).mean() - (po == y[te]).mean())
        df.append(abs(eod(pw, te)) - abs(eod(po, te)))
    t = stats.t.ppf(0.9, R - 1)
    for name, d, tv in [("acc", da, truth_a[0]), ("eod", df, truth_a[1])]:
        d = np.array(d)
        half = t * d.std(ddof=1) * np.sqrt(1 / R + 0.3 / 0.7)
        res["A"].append((name, d.mean(), half, tv))
    # B: K-fold cross-fitting, every row tested once per repeat
    pw_all = np.zeros((RK, n_pilot)); po_all = np.zeros((RK, n_pilot))
    folds = [[] for _ in range(RK)]
    for r in range(RK):
        skf = StratifiedKFold(K, shuffle=True, random_state=int(rng.integers(1 << 30)))
        for tr_i, te_i in skf.split(pilot, y[pilot]):
            folds[r].append(te_i)
            pw_all[r, te_i] = fit_predict(cand, pilot[tr_i], pilot[te_i])
            po_all[r, te_i] = fit_predict(base, pilot[tr_i], pilot[te_i])
    yp = y[pilot]
    # C: the same folds, each fold's paired difference a sample; variance of the mean over the
    # K folds of a repeat (repeats reuse the rows, so the count is K, not K x repeats).
    fa, ff = [], []
    yp_ = yp
    for r in range(RK):
        for te_i in folds[r]:
            tw, to = pw_all[r, te_i], po_all[r, te_i]
            fa.append((tw == yp_[te_i]).mean() - (to == yp_[te_i]).mean())
            ff.append(abs(eod(tw.astype(bool), pilot[te_i])) - abs(eod(to.astype(bool), pilot[te_i])))
    tK = stats.t.ppf(0.9, K - 1)
    for name, d, tv in [("acc", fa, truth_b[0]), ("eod", ff, truth_b[1])]:
        d = np.array(d)
        res["C"].append((name, d.mean(), tK * d.std(ddof=1) / np.sqrt(K), tv))
    d_row = ((pw_all == yp).astype(float) - (po_all == yp).astype(float)).mean(0)
    acc = d_row.mean(); half = z * d_row.std(ddof=1) / np.sqrt(n_pilot)
    res["B"].append(("acc", acc, half, truth_b[0]))
    # EOD of each arm on all rows, each row's prediction averaged over repeats
    pw_m, po_m = pw_all.mean(0), po_all.mean(0)
    fpos, mpos = yp & female[pilot], yp & ~female[pilot]
    ew = pw_m[fpos].mean() - pw_m[mpos].mean(); eo = po_m[fpos].mean() - po_m[mpos].mean()
    point = abs(ew) - abs(eo)
    # delta method: |a|-|b| with a, b differences of group means of per-row predictions
    sw, so = np.sign(ew), np.sign(eo)
    g = sw * pw_m - so * po_m  # per-row contribution
    var = g[fpos].var(ddof=1) / fpos.sum() + g[mpos].var(ddof=1) / mpos.sum()
    res["B"].append(("eod", point, z * np.sqrt(var), truth_b[1]))

print(f"n_pilot {n_pilot}, pilots {pilots}; truth A acc {truth_a[0]:+.4f} eod {truth_a[1]:+.4f}; B acc {truth_b[0]:+.4f} eod {truth_b[1]:+.4f}")
for q in ["acc", "eod"]:
    for m in ["A", "B", "C"]:
        e = [(mu, h, tv) for (n, mu, h, tv) in res[m] if n == q]
        cover = np.mean([abs(mu - tv) <= h for mu, h, tv in e])
        width = np.mean([2 * h for mu, h, tv in e])
        detect = np.mean([abs(mu) > h for mu, h, tv in e])
        err = np.mean([abs(mu - tv) for mu, h, tv in e])
        score = np.mean([2 * h + (2 / 0.2) * max(0, abs(mu - tv) - h) for mu, h, tv in e])
        print(f"{q} {m}: coverage {cover:.2f}, mean width {100*width:.2f} pp, excludes zero {detect:.2f}, MAE {100*err:.2f} pp, interval score {100*score:.2f} pp")
