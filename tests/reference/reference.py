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
    "pow3": (lambda n, a, b, c: a - b * n ** (-c), [0.86, 3.0, 0.5]),
    "exp3": (lambda n, a, b, c: a - b * np.exp(-c * n), [0.84, 0.1, 1e-3]),
    "log2": (lambda n, a, b: a + b * np.log(n), [0.5, 0.03]),
}
for name, (f, p0) in families.items():
    p, _ = curve_fit(f, n, y, p0=p0, sigma=1 / np.sqrt(w), absolute_sigma=True, maxfev=200000,
                     xtol=1e-15, ftol=1e-15, gtol=1e-15)
    rss = float(np.sum(w * (y - f(n, *p)) ** 2))
    print(f"curve_fit {name}:", repr(p.tolist()), "rss", repr(rss))

# Welch's t-test, one-way ANOVA, chi-square test of independence.
a = [0.81, 0.83, 0.80, 0.84, 0.82, 0.85]
b = [0.78, 0.80, 0.79, 0.77, 0.81]
r = stats.ttest_ind(a, b, equal_var=False)
print("welch:", repr(r.statistic), repr(r.pvalue), "df", repr(r.df))
g1, g2, g3 = [0.01, 0.02, 0.015, 0.03], [0.02, 0.025, 0.03, 0.04], [0.05, 0.03, 0.045, 0.04]
r = stats.f_oneway(g1, g2, g3)
print("anova:", repr(r.statistic), repr(r.pvalue))
table = [[30, 70, 12, 28], [300, 560, 110, 290]]
r = stats.chi2_contingency(table, correction=False)
print("chi2:", repr(r.statistic), repr(r.pvalue), r.dof)
