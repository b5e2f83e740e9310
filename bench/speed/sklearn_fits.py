"""Reference fits for kgauge's speed benchmark: scikit-learn MiniBatchKMeans for k = 2..20 on data
held in memory (loaded before timing), one epoch each, no early stopping. Prints one JSON line."""
import json
import sys
import time

import numpy as np
import sklearn
from sklearn.cluster import MiniBatchKMeans

x = np.load(sys.argv[1], mmap_mode="r")
x = np.ascontiguousarray(x)
per_k = {}
start = time.perf_counter()
for k in range(2, 21):
    t = time.perf_counter()
    MiniBatchKMeans(n_clusters=k, batch_size=4096, max_iter=1, max_no_improvement=None,
                    n_init=1, random_state=0).fit(x)
    per_k[k] = time.perf_counter() - t
total = time.perf_counter() - start
print(json.dumps({"rows": int(x.shape[0]), "dims": int(x.shape[1]), "seconds": total,
                  "per_k": per_k, "sklearn": sklearn.__version__}))
