"""Reference values for acquest's tests, computed with general-purpose libraries.

Run once by hand (CI does not need it): python3 tests/reference/reference.py
Versions used for the values stored in the tests: printed on the first line.
"""
import numpy as np
import scipy
import sklearn
import statsmodels
from scipy import stats
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import roc_auc_score
from statsmodels.stats.proportion import proportions_ztest

print(f"scipy {scipy.__version__}, scikit-learn {sklearn.__version__}, statsmodels {statsmodels.__version__}")

z, p = proportions_ztest([45, 60], [100, 100])
print("proportions_ztest([45, 60], [100, 100]):", repr(z), repr(p))

print("fisher_exact([[3, 7], [9, 2]]):", repr(stats.fisher_exact([[3, 7], [9, 2]]).pvalue))
print("fisher_exact([[8, 2], [1, 5]]):", repr(stats.fisher_exact([[8, 2], [1, 5]]).pvalue))

y = [1, 0, 1, 1, 0, 0, 1, 0, 1, 0]
s = [0.9, 0.8, 0.8, 0.6, 0.5, 0.4, 0.4, 0.3, 0.7, 0.1]
print("roc_auc_score:", repr(roc_auc_score(y, s)))

print("t.ppf(0.95, 4):", repr(stats.t.ppf(0.95, 4)))
print("ttest_1samp([1,2,3,4,5], 0):", repr(stats.ttest_1samp([1, 2, 3, 4, 5], 0).pvalue))

# Logistic regression with L2 penalty 1/2 ||w||^2 (intercept not penalised) on a small table.
x = np.array([
    [0.5, 1.0], [1.5, -0.5], [-1.0, 0.3], [2.0, 1.2], [-0.3, -1.1],
    [0.8, 0.4], [-1.7, 0.9], [1.1, -1.4], [0.0, 0.0], [-0.6, 1.8],
    [1.9, 0.2], [-1.2, -0.7],
])
yl = np.array([1, 1, 0, 1, 0, 1, 0, 0, 1, 0, 1, 0])
model = LogisticRegression(C=1.0, tol=1e-12, max_iter=10000).fit(x, yl)
print("logistic coef:", repr(model.coef_[0].tolist()), "intercept:", repr(float(model.intercept_[0])))

# Learning-curve families, weighted least squares (minimise sum w * r^2), weights n / max(n).
from scipy.optimize import curve_fit

n = np.array([500.0, 707.0, 1000.0, 1414.0, 2000.0, 2828.0, 4000.0, 5657.0])
y = np.array([0.7912, 0.8031, 0.8155, 0.8204, 0.8297, 0.8321, 0.8388, 0.8402])
w = n / n.max()
families = {
    "power-law": (lambda n, a, b, c: a - b * n ** (-c), [0.86, 3.0, 0.5]),
    "exponential": (lambda n, a, b, c: a - b * np.exp(-c * n), [0.84, 0.1, 1e-3]),
    "logarithmic": (lambda n, a, b: a + b * np.log(n), [0.5, 0.03]),
}
for name, (f, p0) in families.items():
    p, _ = curve_fit(f, n, y, p0=p0, sigma=1 / np.sqrt(w), absolute_sigma=True, maxfev=200000,
                     xtol=1e-15, ftol=1e-15, gtol=1e-15)
    rss = float(np.sum(w * (y - f(n, *p)) ** 2))
    print(f"curve_fit {name}:", repr(p.tolist()), "rss", repr(rss))

# One-way ANOVA, chi-square test of independence.
g1, g2, g3 = [0.01, 0.02, 0.015, 0.03], [0.02, 0.025, 0.03, 0.04], [0.05, 0.03, 0.045, 0.04]
r = stats.f_oneway(g1, g2, g3)
print("anova:", repr(r.statistic), repr(r.pvalue))
table = [[30, 70, 12, 28], [300, 560, 110, 290]]
r = stats.chi2_contingency(table, correction=False)
print("chi2:", repr(r.statistic), repr(r.pvalue), r.dof)

r = stats.spearmanr([0.1, 0.4, 0.4, 0.2, -0.3, 0.9], [1, 3, 2, 2, 0, 5])
print("spearmanr:", repr(r.statistic))

# Permutation importance and drop-column importance, logistic regression on standardised columns.
from sklearn.inspection import permutation_importance
from sklearn.preprocessing import StandardScaler
import os
rng = np.random.default_rng(5)
n = 240
xs = rng.normal(size=(n, 3))
logit = 1.5 * xs[:, 0] - 0.8 * xs[:, 1] + 0.0 * xs[:, 2]
ys = rng.random(n) < 1 / (1 + np.exp(-logit))
here = os.path.dirname(os.path.abspath(__file__))
with open(os.path.join(here, "importance.csv"), "w") as f:
    f.write("a,b,c,y\n")
    for row, label in zip(xs, ys):
        f.write(f"{row[0]:.6f},{row[1]:.6f},{row[2]:.6f},{int(label)}\n")
xs = np.loadtxt(os.path.join(here, "importance.csv"), delimiter=",", skiprows=1)
x, y = xs[:, :3], xs[:, 3].astype(bool)
train, test = slice(0, 180), slice(180, n)
scaler = StandardScaler().fit(x[train])
model = LogisticRegression(C=1.0, tol=1e-10, max_iter=10000).fit(scaler.transform(x[train]), y[train])
base = model.score(scaler.transform(x[test]), y[test])
pi = permutation_importance(model, scaler.transform(x[test]), y[test], n_repeats=2000, random_state=0, scoring="accuracy")
print("importance base accuracy:", repr(base), "permutation means:", repr(pi.importances_mean.tolist()))
drops = []
for j in range(3):
    keep = [k for k in range(3) if k != j]
    s = StandardScaler().fit(x[train][:, keep])
    m = LogisticRegression(C=1.0, tol=1e-10, max_iter=10000).fit(s.transform(x[train][:, keep]), y[train])
    drops.append(base - m.score(s.transform(x[test][:, keep]), y[test]))
print("drop-column importances:", repr(drops))
