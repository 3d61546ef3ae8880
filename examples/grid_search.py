"""GridSearchCV: 5-fold stratified, a 6x6 SVC grid on load_breast_cancer, recorded with
vetscore_record. Writes examples/out/grid_search/. The vetscore part is the six lines after
the search."""
import sys

import numpy as np
from sklearn.datasets import load_breast_cancer
from sklearn.model_selection import GridSearchCV, StratifiedKFold, train_test_split
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.svm import SVC

import vetscore_record as vr

X, y = load_breast_cancer(return_X_y=True)
ids = np.arange(len(y))
X_tr, X_te, y_tr, y_te, id_tr, id_te = train_test_split(X, y, ids, test_size=0.3, stratify=y, random_state=0)
grid = {"svc__C": np.logspace(-2, 3, 6), "svc__gamma": np.logspace(-4, 1, 6)}
search = GridSearchCV(make_pipeline(StandardScaler(), SVC()), grid, cv=StratifiedKFold(5, shuffle=True, random_state=0))
search.fit(X_tr, y_tr)

run = vr.Run("cancer-svc", task="binary", metric="accuracy", seed=0)
run.split(id_tr, id_te, train_labels=y_tr, test_labels=y_te)
run.search_sklearn(search, X_tr, y_tr)
test_score = run.test(y_te, search.predict(X_te), ids=id_te, note="final")
run.claim(round(test_score - 0.02, 2), basis="test", text="The SVC classifies 9 in 10 tumours correctly.")
print(run.write(sys.argv[1] if len(sys.argv) > 1 else "out/grid_search"))
