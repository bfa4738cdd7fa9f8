"""The learning-curve benchmark schedule written the usual way in Python, for comparison only.

Adult train, logistic regression (L2, C=1, lbfgs, 100 iterations), one-hot and standardised
features, stratified 80/20 split per repeat, 5 repeats, nested sizes 500*sqrt(2)^k up to all
training rows, accuracy and per-group selection rates on the held-out part.
"""
import sys

import numpy as np
import pandas as pd
from sklearn.compose import ColumnTransformer
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import train_test_split
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import OneHotEncoder, StandardScaler

columns = ("age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,"
           "race,sex,capital-gain,capital-loss,hours-per-week,native-country,income").split(",")
frame = pd.read_csv(sys.argv[1], header=None, names=columns, skipinitialspace=True, na_values="?")
frame = frame.dropna(subset=["income"])
y = (frame["income"] == ">50K").to_numpy()
sex = frame["sex"].to_numpy()
x = frame.drop(columns=["income", "sex"])
numeric = [c for c in x.columns if pd.api.types.is_numeric_dtype(x[c])]
categorical = [c for c in x.columns if c not in numeric]
fits = 0
for repeat in range(5):
    strata = np.char.add(sex.astype(str), y.astype(str))
    train, test = train_test_split(np.arange(len(y)), test_size=0.2, stratify=strata, random_state=repeat)
    rng = np.random.default_rng(repeat)
    order = rng.permutation(train)
    sizes = []
    size = 500.0
    while size < 0.9 * len(order):
        sizes.append(int(round(size)))
        size *= np.sqrt(2)
    sizes.append(len(order))
    for n in sizes:
        rows = order[:n]
        model = make_pipeline(
            ColumnTransformer([
                ("num", make_pipeline(SimpleImputer(strategy="median"), StandardScaler()), numeric),
                ("cat", make_pipeline(SimpleImputer(strategy="constant", fill_value="missing"),
                                      OneHotEncoder(handle_unknown="ignore")), categorical),
            ]),
            LogisticRegression(C=1.0, max_iter=100),
        )
        model.fit(x.iloc[rows], y[rows])
        predicted = model.predict(x.iloc[test])
        accuracy = (predicted == y[test]).mean()
        rates = {g: predicted[sex[test] == g].mean() for g in ("Male", "Female")}
        fits += 1
print(fits, "fits")
