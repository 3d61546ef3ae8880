"""RandomizedSearchCV: 20 random configurations of a ridge regression on load_diabetes, scored by
RMSE (scikit-learn's neg_root_mean_squared_error, stored negated), recorded with vetscore_record.
Writes examples/out/random_search/."""
import sys

import numpy as np
from scipy.stats import loguniform
from sklearn.datasets import load_diabetes
from sklearn.linear_model import Ridge
from sklearn.model_selection import KFold, RandomizedSearchCV, train_test_split

import vetscore_record as vr

X, y = load_diabetes(return_X_y=True)
ids = np.arange(len(y))
X_tr, X_te, y_tr, y_te, id_tr, id_te = train_test_split(X, y, ids, test_size=0.25, random_state=0)
search = RandomizedSearchCV(Ridge(), {"alpha": loguniform(1e-4, 1e2)}, n_iter=20, random_state=0,
                            scoring="neg_root_mean_squared_error", cv=KFold(5, shuffle=True, random_state=0))
search.fit(X_tr, y_tr)

run = vr.Run("diabetes-ridge", task="regression", metric="rmse", seed=0)
run.split(id_tr, id_te)
run.search_sklearn(search, X_tr, y_tr)
rmse = run.test(y_te, search.predict(X_te), ids=id_te, note="final")
# A cv claim: the best CV RMSE itself, which ignores the search's optimism.
run.claim(-search.best_score_, basis="cv", text="Ridge predicts progression within the CV RMSE.")
print(run.write(sys.argv[1] if len(sys.argv) > 1 else "out/random_search"))
