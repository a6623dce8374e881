"""Student t and F quantiles from scipy.stats, one per line: "t p dof value" or "f p d1 d2 value"."""
from scipy import stats

for p, dof in [(0.975, 1), (0.975, 2), (0.975, 9), (0.975, 29), (0.95, 4), (0.995, 60), (0.975, 1000)]:
    print("t", p, dof, repr(float(stats.t.ppf(p, dof))))
for p, d1, d2 in [(0.95, 1, 1), (0.95, 1, 5), (0.95, 1, 10), (0.95, 2, 10), (0.99, 3, 20), (0.95, 1, 200)]:
    print("f", p, d1, d2, repr(float(stats.f.ppf(p, d1, d2))))
