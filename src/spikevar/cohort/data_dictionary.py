"""Description of every column of every table spikevar hands over (the one source of truth).

Each entry: column -> (meaning, unit, method / reference). Metadata columns from the sessions
sheet (``session``, ``subject``, ``group`` and any extra column) lead every cohort table.
"""

from __future__ import annotations

META = {
    "session": ("session id from the sessions sheet", "", ""),
    "subject": ("animal / participant id", "", ""),
    "group": ("between-subject group from the sheet (default 'all')", "", ""),
}
EXTRA_META = ("any other sheet column, carried as text", "", "")
#: the column every cohort per-unit table gains from the session's unit_selection
INCLUDED = {"included": ("the unit passes every inclusion rule (unit_selection); population "
                         "and group statistics use included units only", "",
                         "config inclusion")}
COX = "Cox 1962, Renewal Theory (Methuen), ch. 9"

HOLT = "Holt et al. 1996, J Neurophysiol 75:1806"
SHIN03 = "Shinomoto et al. 2003, Neural Comput 15:2823"
SHIN09 = "Shinomoto et al. 2009, PLoS Comput Biol 5:e1000433"
EDEN = "Eden & Kramer 2010, J Neurosci Methods 190:149"
BROWN = "Brown et al. 2002, Neural Comput 14:325"
CHURCH = "Churchland et al. 2010, Nat Neurosci 13:369"
SARAV = "Saravanan, Berman & Sober 2020, Neurons Behav Data Anal Theory 3(5)"
COHEN = "Cohen & Kohn 2011, Nat Neurosci 14:811"
WILL = "Williamson et al. 2016, PLoS Comput Biol 12:e1005141"
UMAK = "Umakantha et al. 2021, Neuron 109:2740"
GORIS = "Goris, Movshon & Simoncelli 2014, Nat Neurosci 17:858"
ROCHA = "de la Rocha et al. 2007, Nature 448:802"

_STRATUM = {
    "alignment": ("event-table column the trials are aligned on", "", "config alignments"),
    "condition": ("condition label of the trials", "", ""),
    "epoch": ("named window relative to the event", "", "config epochs"),
    "n_trials": ("trials of the condition whose windows all lie inside the recording", "count",
                 ""),
}
_BOOT = ("95% interval: subjects, then sessions within them, resampled (each session "
         "summarised first)", "metric's unit", SARAV)

TABLES: dict[str, dict[str, tuple[str, str, str]]] = {
    "units": {
        "unit": ("unit id (text)", "", ""),
        "n_spikes": ("number of spikes", "count", ""),
        "duration_s": ("recording length used for rates", "s", "sheet duration_s, else spike span"),
        "rate_hz": ("mean firing rate", "Hz", "n_spikes / duration_s"),
        "mean_isi_s": ("mean inter-spike interval", "s", ""),
        "isi_cv": ("coefficient of variation of ISIs (ddof = 1)", "", "Cox 1962"),
        "isi_cv2": ("mean local CV of consecutive ISI pairs", "", HOLT),
        "isi_lv": ("local variation of ISIs", "", SHIN03),
        "isi_lvr": ("revised local variation, refractoriness constant R", "", SHIN09),
        "refractory_violation_fraction": ("fraction of ISIs below the refractory threshold", "",
                                          "config metrics.refractory_threshold_s"),
        "n_refractory_violations": ("ISIs below the refractory threshold", "count", ""),
        "contamination_hill": ("estimated fraction of spikes from other neurons, assuming ONE "
                               "contaminating neuron that is itself refractory", "",
                               "Hill, Mehta & Kleinfeld 2011, J Neurosci 31:8699"),
        "contamination_poisson": ("estimated fraction of spikes from other neurons, assuming "
                                  "the contaminating spikes are a Poisson process (many small "
                                  "sources)", "", "Llobet et al. 2022, bioRxiv (recalled from "
                                  "memory; checked by simulation)"),
        "contamination_poisson_flag": ("why contamination_poisson is NaN ('' if defined)", "",
                                       ""),
        "contamination_flag": ("why contamination_hill is NaN ('' if defined)", "", ""),
        "fano_longest_window_s": ("longest counting window", "s", ""),
        "fano_to_cv2": ("count Fano factor at the longest window / isi_cv^2 (about 1 for a "
                        "stationary renewal train); NaN unless the window holds at least 20 "
                        "mean intervals", "", "Cox 1962"),
        "fano_to_cv2_reason": ("why fano_to_cv2 is NaN ('' if defined)", "", ""),
        "isi_reason": ("why ISI measures are NaN ('' if defined)", "", ""),
        "first_spike_s": ("time of the unit's first spike", "s", ""),
        "last_spike_s": ("time of the unit's last spike", "s", ""),
        "rate_drift_pvalue": ("p-value of the test that the block counts (unit_blocks) come "
                              "from one stationary rate: chi-squared dispersion of the counts "
                              "with the renewal count variance CV^2 x mean allowed for, CV^2 "
                              "measured inside the blocks", "", COX),
        "rate_drift_reason": ("why rate_drift_pvalue is NaN ('' if tested)", "", ""),
        "stable": ("rate_drift_pvalue >= stability.alpha (false when not testable)", "",
                   "config stability"),
    },
    "unit_blocks": {
        "unit": ("unit id", "", ""),
        "block": ("index of the block, from 0 at the start of the recording span", "", ""),
        "block_start_s": ("start of the block", "s", "config stability.block_s"),
        "block_s": ("length of the block (the last may be shorter)", "s", ""),
        "n_spikes": ("spikes in the block", "count", ""),
        "rate_hz": ("rate in the block", "Hz", "n_spikes / block_s"),
        "isi_cv2": ("mean local CV of consecutive ISI pairs inside the block", "", HOLT),
        "fano": ("Fano factor of the counts in the block's sub-windows", "",
                 "config stability.subwindow_s"),
    },
    "unit_selection": {
        "unit": ("unit id", "", ""),
        "included": ("the unit passes every inclusion rule", "", "config inclusion"),
        "exclusion_reasons": ("every rule the unit fails, ';'-separated ('' when included)",
                              "", "config inclusion"),
        "excluded_by": ("config names of the inclusion rules the unit fails, ';'-separated",
                        "", "config inclusion"),
        "label": ("the unit's label from the sheet's unit_labels table ('' if none)", "",
                  "sheet column unit_labels"),
    },
    "count_fano": {
        "unit": ("unit id", "", ""),
        "window_s": ("counting window", "s", "non-overlapping windows over the recording"),
        "n_windows": ("number of complete windows", "count", ""),
        "mean_count": ("mean spike count per window", "count", ""),
        "var_count": ("variance of the count (ddof = 1)", "count^2", ""),
        "fano": ("Fano factor var_count / mean_count", "", ""),
        "fano_lo": ("2.5% point of the Fano factor of n_windows Poisson counts", "", EDEN),
        "fano_hi": ("97.5% point of the Fano factor of n_windows Poisson counts", "", EDEN),
        "fano_reason": ("why fano is NaN ('' if defined)", "", ""),
    },
    "fano_timecourse": {
        "unit": ("unit id", "", ""),
        "alignment": ("event-table column the trials are aligned on (config alignments)", "",
                      ""),
        "condition": ("event condition", "", ""),
        "time_s": ("window centre relative to the alignment event", "s", ""),
        "window_s": ("window width", "s", ""),
        "n_trials": ("trials whose windows lie inside the recording", "count", ""),
        "n_trials_dropped": ("trials dropped because a window left the recording", "count", ""),
        "n_trials_no_time": ("trials without a time in this alignment's column (left out of "
                             "this alignment only)", "count", ""),
        "mean_count": ("mean count across trials", "count", ""),
        "var_count": ("variance across trials (ddof = 1)", "count^2", ""),
        "fano": ("Fano factor across trials", "", ""),
        "rate_hz": ("PSTH rate mean_count / window_s", "Hz", ""),
        "fano_reason": ("why fano is NaN ('' if defined)", "", ""),
    },
    "recovery": {
        "unit": ("unit id", "", ""),
        "model": ("poisson, dead_time or exp_recovery", "", ""),
        "fit_kind": ("stationary, or slow_rate_modulated (rate x own slow rate)", "",
                     "Berry & Meister 1998; Kass & Ventura 2001"),
        "asymptotic_rate_hz": ("rate after full recovery (r_inf)", "Hz", "maximum likelihood"),
        "recovery_tau_s": ("recovery time constant tau", "s", "maximum likelihood"),
        "dead_time_s": ("dead time d", "s", "threshold MLE (Smith 1985, Biometrika 72:67)"),
        "tau_ci_lo": ("95% profile-likelihood interval of tau, lower end", "s", ""),
        "tau_ci_hi": ("95% profile-likelihood interval of tau, upper end", "s", ""),
        "log_likelihood": ("maximised log-likelihood", "", ""),
        "aic": ("Akaike information criterion 2k - 2 log L", "", ""),
        "ks_stat": ("KS distance of time-rescaled intervals from uniform", "", BROWN),
        "ks_pvalue": ("KS p-value with the null for parameters fitted on the same intervals "
                      "(simulated table; size 4-5% measured)", "", "Lilliefors 1969, JASA "
                      "62:399; table from bench/calibrate_ks_null.py"),
        "ks_pvalue_known_params": ("KS p-value as if the parameters were known (too large)",
                                   "", "scipy kstwo; above 10,000 intervals Stephens 1970, "
                                   "J R Stat Soc B 32:115"),
        "ks_band_95": ("half-width of the 95% KS band for fitted parameters", "", BROWN),
        "nested_lr_pvalue": ("likelihood-ratio p-value of this model against the next simpler "
                             "one (dead_time vs poisson: exact Beta null of the threshold "
                             "gain; exp_recovery vs dead_time: 1/2 chi2_0 + 1/2 chi2_1)", "",
                             "Smith 1985, Biometrika 72:67; Self & Liang 1987, JASA 82:605"),
        "n_intervals": ("uncensored intervals fitted", "count", ""),
        "converged": ("the optimiser stopped at the optimum (success, or a projected gradient "
                      "below 1e-3)", "", "Byrd et al. 1995, SIAM J Sci Comput 16:1190"),
        "tau_at_bound": ("'lower' (10 us, the dead-time limit) or 'upper' (20 mean intervals: "
                         "slower than the data resolve) when tau ended at a bound of its range, "
                         "else ''; such a tau is a limit, not a measurement", "", ""),
        "preferred": ("model chosen by nested likelihood-ratio tests at level 0.05 (simplest "
                      "model no richer one beats)", "", ""),
        "fit_note": ("remarks: bounds reached, too few intervals, optimiser message", "", ""),
    },
    "population_fano": {
        "condition": ("event condition", "", ""),
        "alignment": ("event-table column the trials are aligned on", "", ""),
        "time_s": ("window centre relative to the event", "s", ""),
        "window_s": ("window width", "s", ""),
        "n_units": ("units with a defined mean and variance in the window", "count", ""),
        "mean_count": ("mean across units of the mean count", "count", ""),
        "fano_regression": ("slope of count variance on mean across units through 0, weighted "
                            "by the sampling error of each variance ((n_trials - 1) / mean^2)",
                            "", CHURCH + " (weighting recalled from memory)"),
        "regression_ci_lo": ("95% interval of fano_regression: subjects resampled, t(G-1) "
                             "few-cluster correction", "", "Cameron & Miller 2015, J Hum "
                             "Resour 50:317"),
        "regression_ci_hi": ("upper end of that interval", "", ""),
        "fano_regression_unweighted": ("ordinary least-squares slope through 0 (dominated by "
                                       "high-rate units)", "", ""),
        "fano_mean_matched": ("mean-matched Fano factor (weighted slope on the units kept; "
                              "config population.match_across sets which series share the "
                              "common distribution)", "", CHURCH),
        "ci_lo": ("95% interval of fano_mean_matched: subjects resampled, the whole averaged "
                  "matching redone in each resample, t(G-1) correction", "", ""),
        "ci_hi": ("upper end of that interval", "", ""),
        "n_units_matched": ("units kept by mean matching in each window (the size of the "
                            "common distribution; below population.min_units no mean-matched "
                            "value is given)", "count", CHURCH),
        "mean_count_matched": ("mean spike count per window of the units mean matching kept "
                               "(averaged over the matchings)", "count", CHURCH),
        "population_reason": ("why values are NaN ('' if defined)", "", ""),
    },
    "group_summary": {
        "metric": ("unit metric summarised", "", ""),
        "metric_label": ("readable metric name with unit", "", ""),
        "alignment": ("alignment of a shared-variability metric ('' for unit metrics)", "", ""),
        "condition": ("condition of a shared-variability metric ('' for unit metrics)", "", ""),
        "epoch": ("epoch of a session metric ('' for unit metrics and gain_variance)", "", ""),
        "n_units": ("units with a value (for session metrics: sessions)", "count", ""),
        "n_sessions": ("sessions contributing", "count", ""),
        "n_subjects": ("subjects contributing", "count", ""),
        "mean": ("mean over units", "metric's unit", ""),
        "mean_ci_lo": ("95% hierarchical-bootstrap interval of the mean", "metric's unit", SARAV),
        "mean_ci_hi": ("95% hierarchical-bootstrap interval of the mean", "metric's unit", SARAV),
        "median": ("median over units", "metric's unit", ""),
        "median_ci_lo": ("95% hierarchical-bootstrap interval of the median", "metric's unit",
                         SARAV),
        "median_ci_hi": ("95% hierarchical-bootstrap interval of the median", "metric's unit",
                         SARAV),
        "n_tau_at_bound": ("units of the group whose tau ended at a bound (left out of the tau "
                           "summary; 0 for other metrics)", "count", ""),
        "summary_reason": ("caveat or why values are NaN", "", ""),
    },
    "group_differences": {
        "metric": ("unit metric compared", "", ""),
        "group_a": ("first group", "", ""),
        "group_b": ("second group", "", ""),
        "alignment": ("alignment of a shared-variability metric ('' for unit metrics)", "", ""),
        "condition": ("condition of a shared-variability metric ('' for unit metrics)", "", ""),
        "epoch": ("epoch of a session metric ('' for unit metrics and gain_variance)", "", ""),
        "diff_mean": ("mean(a) - mean(b)", "metric's unit", ""),
        "diff_mean_ci_lo": ("95% hierarchical-bootstrap interval", "metric's unit", SARAV),
        "diff_mean_ci_hi": ("95% hierarchical-bootstrap interval", "metric's unit", SARAV),
        "p_mean": ("two-sided bootstrap p-value of diff_mean", "", SARAV),
        "diff_median": ("median(a) - median(b)", "metric's unit", ""),
        "diff_median_ci_lo": ("95% hierarchical-bootstrap interval", "metric's unit", SARAV),
        "diff_median_ci_hi": ("95% hierarchical-bootstrap interval", "metric's unit", SARAV),
        "p_median": ("two-sided bootstrap p-value of diff_median", "", SARAV),
        "p_permutation": ("two-sided permutation p-value of diff_mean, whole subjects "
                          "permuted between the two groups (exact enumeration up to 20,000 "
                          "arrangements, else 20,000 random ones)", "",
                          "Fisher 1935; Good 2005, Permutation, Parametric and Bootstrap Tests"),
        "p_permutation_min": ("smallest p_permutation the subjects allow (2 / C(n_a + n_b, n_a) "
                              "for equal groups); with 3 animals per group it is 0.1", "", ""),
        "permutation_exact": ("every arrangement of subjects was enumerated", "", ""),
        "few_subjects": ("a group has fewer than 5 subjects: bootstrap intervals and p_mean / "
                         "p_median are too narrow / too small there; use p_permutation", "", ""),
        "difference_reason": ("why values are NaN ('' if defined)", "", ""),
    },
    "pair_correlations": {
        "unit_a": ("first unit of the pair (text id)", "", ""),
        "unit_b": ("second unit of the pair", "", ""),
        **_STRATUM,
        "r_sc": ("noise correlation: Pearson correlation of the two units' trial counts in the "
                 "epoch, within the condition", "", COHEN),
        "geo_mean_rate_hz": ("geometric mean of the two units' mean rates in the epoch", "Hz",
                             ROCHA),
        "r_sc_reason": ("why r_sc is NaN ('' if defined)", "", ""),
    },
    "shared_variance": {
        "unit": ("unit id", "", ""),
        **_STRATUM,
        "n_factors": ("factors of the condition x epoch factor analysis (chosen by 5-fold "
                      "cross-validated likelihood)", "count", WILL),
        "shared_variance": ("diagonal of the shared covariance L L^T of the unit's counts",
                            "count^2", WILL),
        "private_variance": ("private (independent) variance Psi of the unit's counts",
                             "count^2", WILL),
        "percent_shared": ("100 shared / (shared + private)", "%", WILL),
        "shared_reason": ("why the values are NaN ('' if defined)", "", ""),
    },
    "population_structure": {
        **_STRATUM,
        "n_units": ("units whose counts vary (entered the factor analysis)", "count", ""),
        "n_factors": ("factors chosen by cross-validated likelihood", "count", WILL),
        "dim_shared": ("eigenvectors of L L^T needed for 95% of the shared variance", "count",
                       WILL),
        "percent_shared_mean": ("mean percent_shared over the units", "%", WILL),
        "mean_r_sc": ("mean r_sc over the pairs with a value", "", COHEN),
        "loading_similarity": ("1 - n var(w) of the unit-norm first loading vector w: 1 when "
                               "every unit loads alike, 0 when one unit carries it", "", UMAK),
        "structure_reason": ("why values are NaN or 0 ('' if defined)", "", ""),
    },
    "shared_timecourse": {
        **_STRATUM,
        "time_s": ("window centre from the alignment event", "s", ""),
        "window_s": ("window width", "s", "config timecourse"),
        "n_units": ("units whose counts vary in the window", "count", ""),
        "n_factors": ("factors used in every window (config shared.factor_epoch: by default the "
                      "largest number chosen in the condition's epochs)",
                      "count", WILL),
        "mean_r_sc": ("mean r_sc over pairs in the window", "", COHEN),
        "percent_shared_mean": ("mean percent shared over units in the window", "%", WILL),
    },
    "gain_variance": {
        "unit": ("unit id", "", ""),
        **_STRATUM,
        "n_windows": ("time-course windows with a positive mean count used in the fit",
                      "count", ""),
        "gain_variance": ("sigma2_G of the modulated Poisson model, least squares of "
                          "var - mean on mean^2 across the condition's windows", "", GORIS),
        "fit_note": ("why gain_variance is NaN ('' if defined)", "", ""),
    },
    "shared_over_time": {
        "alignment": _STRATUM["alignment"],
        "condition": _STRATUM["condition"],
        "time_s": ("window centre from the alignment event", "s", ""),
        "window_s": ("window width", "s", ""),
        "mean_r_sc": ("mean over sessions of the session's mean r_sc", "", COHEN),
        "mean_r_sc_ci_lo": _BOOT, "mean_r_sc_ci_hi": _BOOT,
        "n_sessions_mean_r_sc": ("sessions with a value", "count", ""),
        "percent_shared_mean": ("mean over sessions of the session's mean percent shared", "%",
                                WILL),
        "percent_shared_mean_ci_lo": _BOOT, "percent_shared_mean_ci_hi": _BOOT,
        "n_sessions_percent_shared_mean": ("sessions with a value", "count", ""),
        "n_subjects": ("subjects of the group", "count", ""),
    },
    "r_sc_by_rate": {
        "alignment": _STRATUM["alignment"],
        "condition": _STRATUM["condition"],
        "epoch": _STRATUM["epoch"],
        "rate_lo_hz": ("lower edge of the geometric-mean-rate bin (octaves)", "Hz", ROCHA),
        "rate_hi_hz": ("upper edge of the bin (inf: open)", "Hz", ""),
        "r_sc": ("mean over sessions of each session's mean r_sc in the bin", "", COHEN),
        "r_sc_ci_lo": _BOOT, "r_sc_ci_hi": _BOOT,
        "n_sessions_r_sc": ("sessions with pairs in the bin", "count", ""),
        "n_subjects": ("subjects of the group", "count", ""),
        "n_pairs": ("pairs in the bin, all sessions", "count", ""),
    },
    "failed_sessions": {
        "session": ("session that failed", "", ""),
        "rule": ("the step that failed", "", ""),
        "reason": ("the error message", "", ""),
    },
}


FACTOR = ("one factor of the condition (its event-table column); the condition label "
          "combines every factor", "", "config columns.event_condition")


def describe(table: str, column: str, factors: tuple[str, ...] = ()) -> tuple[str, str, str]:
    """Meaning, unit and method of a column (sheet metadata and condition factors included)."""
    if column in TABLES.get(table, {}):
        return TABLES[table][column]
    if column in factors or (column == "condition_factor" and "condition" in factors):
        return FACTOR
    if column in INCLUDED:
        return INCLUDED[column]
    if column in META:
        return META[column]
    return EXTRA_META


def to_markdown(columns_by_table: dict[str, list[str]], factors: tuple[str, ...] = ()) -> str:
    """The data dictionary as Markdown, for the tables and columns actually written."""
    lines = ["# spikevar data dictionary", "",
             "Every column of every table in `cohort/`. Units: s = seconds, Hz = 1/s.", ""]
    for table, columns in columns_by_table.items():
        lines += [f"## {table}", "", "| column | meaning | unit | method / reference |",
                  "|---|---|---|---|"]
        for column in columns:
            meaning, unit, method = describe(table, column, factors)
            lines.append(f"| `{column}` | {meaning} | {unit} | {method} |")
        lines.append("")
    return "\n".join(lines)
