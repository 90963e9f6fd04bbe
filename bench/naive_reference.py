"""A straightforward per-unit / per-trial implementation, as a lab script would be written.

Used only by the benchmarks as the baseline that spikevar's vectorised code is compared with.
"""

import numpy as np
import pandas as pd


def naive_tables(spikes: pd.DataFrame, events: pd.DataFrame, *, windows_s, tc_left, tc_width,
                 start, stop, R=0.005):
    units_rows, count_rows, tc_rows = [], [], []
    for unit, frame in spikes.groupby("unit"):
        t = frame["time_s"].to_numpy()
        isi = np.diff(t)
        row = {"unit": unit, "n_spikes": len(t), "rate_hz": len(t) / (stop - start)}
        if len(isi) >= 2:
            row["isi_cv"] = isi.std(ddof=1) / isi.mean()
            a, b = isi[:-1], isi[1:]
            row["isi_cv2"] = np.mean(2 * np.abs(b - a) / (a + b))
            row["isi_lv"] = 3 * np.mean(((a - b) / (a + b)) ** 2)
            row["isi_lvr"] = 3 * np.mean((1 - 4 * a * b / (a + b) ** 2) * (1 + 4 * R / (a + b)))
        units_rows.append(row)
        for w in windows_s:
            n = int(np.floor((stop - start) / w + 1e-9))
            counts, _ = np.histogram(t, bins=start + w * np.arange(n + 1))
            count_rows.append({"unit": unit, "window_s": w, "mean_count": counts.mean(),
                               "var_count": counts.var(ddof=1)})
        for cond, ev in events.groupby("condition"):
            per_trial = []
            for e in ev["time_s"]:
                per_trial.append([np.sum((t >= e + lo) & (t < e + lo + tc_width))
                                  for lo in tc_left])
            counts = np.array(per_trial)
            for j, lo in enumerate(tc_left):
                tc_rows.append({"unit": unit, "condition": cond, "time_s": lo + tc_width / 2,
                                "mean_count": counts[:, j].mean(),
                                "var_count": counts[:, j].var(ddof=1)})
    return pd.DataFrame(units_rows), pd.DataFrame(count_rows), pd.DataFrame(tc_rows)


def naive_recovery_fit(isi, censored):
    """exp_recovery fitted the plain way: Nelder-Mead on the full 3-parameter likelihood."""
    from scipy import optimize

    def negative_loglik(theta):
        r, tau, d = np.exp(theta[0]), np.exp(theta[1]), theta[2]
        if d < 0 or d >= isi.min():
            return 1e300
        u = isi - d
        h = r * (1 - np.exp(-u / tau))
        big_h = r * (u - tau * (1 - np.exp(-u / tau)))
        uc = max(censored - d, 0.0)
        hc = r * (uc - tau * (1 - np.exp(-uc / tau)))
        return -(np.sum(np.log(h)) - np.sum(big_h) - hc)

    start = np.array([np.log(1 / isi.mean()), np.log(isi.mean() / 10), isi.min() / 2])
    return optimize.minimize(negative_loglik, start, method="Nelder-Mead",
                             options={"maxiter": 4000, "xatol": 1e-8, "fatol": 1e-8})
