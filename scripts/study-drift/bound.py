"""What any test of the newest periods can do for a mixed cost's shift.

The portfolio study's targets for a 15 % rise of a mixed cost's fixed part
(about 7.5 % of the cost, the fixed part being 45-55 % of it) at 2-5 % noise
ask for an alert within 3 month-ends in 60 % of cases and within 6 in 90 %,
with at most 2 % of stable costs alerted over a year of 13 analyses.

This simulates the most favourable case a test can meet: the formula is
known to be a constant (nothing to estimate but a level), the noise is
independent and normal, and at each analysis the newest m periods (m = 3,
or each m of 3-6) are tested against the 36 - m before them by the t test
of a level shift. It finds, for each critical |t|, the share of stable
series alerted at least once over the 13 analyses, and the share of shifted
series alerted within 3 and within 6 month-ends of the change. Any real
test estimates a rate as well, so it does worse.

It then simulates a sequential monitor instead of a fresh test at each
month-end: Page's two-sided CUSUM (Page 1954, "Continuous inspection
schemes", Biometrika 41), which among procedures with the same rate of false
alarms comes nearest to the shortest delay (Lorden 1971, "Procedures for
reacting to a change in distribution", Ann. Math. Statist. 42). It
accumulates, period by period from the first analysis on, the newest cost's
standardised distance from the level fitted on that analysis's 36 periods,
less an allowance k, and alerts when either sum passes h. Once with the
level and the noise estimated from the 36 periods, as any monitor must, and
once with them known exactly, which no monitor can: the second is the
ceiling, the first what is reachable. The change comes 2 to 6 months after
the first analysis, as in the study.

Both are run twice: as plain tests, and with the alerts' floor (README,
Alerts): a warning needs the shift's estimate to be at least 10 % of the
fixed part, which a fluke on a quiet cost rarely is. The floor is the
engine's own, so the second run is the fairer bound on what it can reach.

Usage: python3 scripts/study-drift/bound.py   (needs numpy; Debian: python3-numpy)
"""
import numpy as np

rng = np.random.default_rng(1)
WINDOW, ROLLS = 36, 12
FLOOR = 0.10  # the alerts' MinShift, of the fixed part


def level_t(window, m):
    """t of a level shift of the newest m periods of each row, and the shift."""
    old, new = window[:, :-m], window[:, -m:]
    d = new.mean(1) - old.mean(1)
    rss = ((old - old.mean(1, keepdims=True)) ** 2).sum(1) + ((new - new.mean(1, keepdims=True)) ** 2).sum(1)
    s2 = rss / (window.shape[1] - 2)
    return d / np.sqrt(s2 * (1 / m + 1 / old.shape[1])), d


def costs(n):
    """Each series' fixed part as a share of its cost and its noise (sd as a
    share of the cost): the shift and the floor in units of the noise."""
    share = rng.uniform(0.45, 0.55, n)
    cv = rng.uniform(0.02, 0.05, n)
    return 0.15 * share / cv, FLOOR * share / cv


def year_false_alarms(c, ms, floor, n=100_000):
    _, least = costs(n)
    stable = rng.standard_normal((n, WINDOW + ROLLS))
    hit = np.zeros(n, bool)
    for k in range(ROLLS + 1):
        w = stable[:, k:k + WINDOW]
        for m in ms:
            t, d = level_t(w, m)
            hit |= (np.abs(t) > c) & ((np.abs(d) >= least) | (not floor))
    return hit.mean()


def detected(c, ms, floor, within, n=100_000):
    shift, least = costs(n)
    change = WINDOW + 1
    series = rng.standard_normal((n, change + within))
    series[:, change:] += shift[:, None]
    hit = np.zeros(n, bool)
    for after in range(1, within + 1):
        w = series[:, change + after - WINDOW:change + after]
        for m in ms:
            if m <= after:
                t, d = level_t(w, m)
                hit |= (np.abs(t) > c) & ((np.abs(d) >= least) | (not floor))
    return hit.mean()


for floor in (False, True):
    for ms in ([3], [3, 4, 5, 6]):
        print("newest periods tested:", ms, "with the alerts' floor" if floor else "")
        for c in (3.0, 3.2, 3.4, 3.6, 3.8):
            print("  |t| > %.1f: stable alerted over the year %5.2f %%, shifted alerted within 3 %5.1f %%, within 6 %5.1f %%"
                  % (c, 100 * year_false_alarms(c, ms, floor), 100 * detected(c, ms, floor, 3), 100 * detected(c, ms, floor, 6)))


def cusum_first_alarm(r, scale, k, h, least):
    """Index of the first period at which either CUSUM of the residuals r,
    in units of scale, passes h with the mean residual since the sum last
    stood at zero (the change's estimate) at least least; len if none."""
    n, periods = r.shape
    up, down = np.zeros(n), np.zeros(n)
    sum_up, sum_down = np.zeros(n), np.zeros(n)
    len_up, len_down = np.zeros(n), np.zeros(n)
    first = np.full(n, periods)
    for t in range(periods):
        z = r[:, t] / scale
        up, restart = up + z - k, up + z - k <= 0
        up[restart] = 0
        sum_up = np.where(restart, 0, sum_up + r[:, t])
        len_up = np.where(restart, 0, len_up + 1)
        down, restart = down - z - k, down - z - k <= 0
        down[restart] = 0
        sum_down = np.where(restart, 0, sum_down + r[:, t])
        len_down = np.where(restart, 0, len_down + 1)
        alarm = (up > h) & (np.abs(sum_up) >= least * len_up)
        alarm |= (down > h) & (np.abs(sum_down) >= least * len_down)
        first[alarm & (first == periods)] = t
    return first


def residuals(series, known):
    """The monitored periods' distance from the first window's level, and
    the noise's scale: estimated from the window, or known (0 and 1)."""
    ref, new = series[:, :WINDOW], series[:, WINDOW:]
    if known:
        return new, np.ones(len(series))
    level, sd = ref.mean(1, keepdims=True), ref.std(1, ddof=1)
    return new - level, sd * np.sqrt(1 + 1 / WINDOW)


def monitor(k, h, known, floor, n=100_000):
    _, least = costs(n)
    least = least if floor else np.zeros(n)
    stable = rng.standard_normal((n, WINDOW + ROLLS))
    false = (cusum_first_alarm(*residuals(stable, known), k, h, least) < ROLLS).mean()
    shift, least = costs(n)
    least = least if floor else np.zeros(n)
    change = rng.integers(2, 7, n)  # months after the first analysis
    series = rng.standard_normal((n, WINDOW + ROLLS))
    series[:, WINDOW:] += shift[:, None] * (np.arange(ROLLS)[None, :] >= change[:, None])
    first = cusum_first_alarm(*residuals(series, known), k, h, least)
    early = first < change
    return false, ((first >= change) & (first < change + 3) & ~early).mean(), ((first >= change) & (first < change + 6)).mean()


for floor in (False, True):
    for known in (False, True):
        print("sequential monitor (CUSUM), level and noise", "known exactly (the ceiling)" if known else "estimated from the 36 periods",
              "with the alerts' floor" if floor else "")
        for k, h in ((0.5, 4.5), (0.6, 4.0), (0.6, 4.5), (0.7, 4.0), (0.75, 3.5), (0.75, 4.0), (1.0, 3.0), (1.0, 3.5)):
            f, w3, w6 = monitor(k, h, known, floor)
            print("  k %.2f, h %.1f: stable alerted over the year %5.2f %%, shifted alerted within 3 %5.1f %%, within 6 %5.1f %%"
                  % (k, h, 100 * f, 100 * w3, 100 * w6))
