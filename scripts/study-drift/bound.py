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

Usage: python3 scripts/study-drift/bound.py   (needs numpy; Debian: python3-numpy)
"""
import numpy as np

rng = np.random.default_rng(1)
WINDOW, ROLLS = 36, 12


def level_t(window, m):
    """t of a level shift of the newest m periods of each row."""
    old, new = window[:, :-m], window[:, -m:]
    d = new.mean(1) - old.mean(1)
    rss = ((old - old.mean(1, keepdims=True)) ** 2).sum(1) + ((new - new.mean(1, keepdims=True)) ** 2).sum(1)
    s2 = rss / (window.shape[1] - 2)
    return d / np.sqrt(s2 * (1 / m + 1 / old.shape[1]))


def year_false_alarms(c, ms, n=100_000):
    stable = rng.standard_normal((n, WINDOW + ROLLS))
    hit = np.zeros(n, bool)
    for k in range(ROLLS + 1):
        w = stable[:, k:k + WINDOW]
        for m in ms:
            hit |= np.abs(level_t(w, m)) > c
    return hit.mean()


def detected(c, ms, within, n=100_000):
    share = rng.uniform(0.45, 0.55, n)
    cv = rng.uniform(0.02, 0.05, n)
    shift = 0.15 * share / cv  # the rise in units of the noise
    change = WINDOW + 1
    series = rng.standard_normal((n, change + within))
    series[:, change:] += shift[:, None]
    hit = np.zeros(n, bool)
    for after in range(1, within + 1):
        w = series[:, change + after - WINDOW:change + after]
        for m in ms:
            if m <= after:
                hit |= np.abs(level_t(w, m)) > c
    return hit.mean()


for ms in ([3], [3, 4, 5, 6]):
    print("newest periods tested:", ms)
    for c in (3.0, 3.2, 3.4, 3.6, 3.8):
        print("  |t| > %.1f: stable alerted over the year %5.2f %%, shifted alerted within 3 %5.1f %%, within 6 %5.1f %%"
              % (c, 100 * year_false_alarms(c, ms), 100 * detected(c, ms, 3), 100 * detected(c, ms, 6)))


def cusum_first_alarm(z, k, h):
    """Index of the first period at which either CUSUM of z passes h; len if none."""
    n, periods = z.shape
    up, down = np.zeros(n), np.zeros(n)
    first = np.full(n, periods)
    for t in range(periods):
        up = np.maximum(0, up + z[:, t] - k)
        down = np.maximum(0, down - z[:, t] - k)
        new = ((up > h) | (down > h)) & (first == periods)
        first[new] = t
    return first


def standardised(series, known):
    """The monitored periods' distance from the first window's level, in units
    of the noise; estimated from the window, or known (0 and 1)."""
    ref, new = series[:, :WINDOW], series[:, WINDOW:]
    if known:
        return new
    level, sd = ref.mean(1, keepdims=True), ref.std(1, ddof=1, keepdims=True)
    return (new - level) / (sd * np.sqrt(1 + 1 / WINDOW))


def monitor(k, h, known, n=100_000):
    stable = rng.standard_normal((n, WINDOW + ROLLS))
    false = (cusum_first_alarm(standardised(stable, known), k, h) < ROLLS).mean()
    share = rng.uniform(0.45, 0.55, n)
    cv = rng.uniform(0.02, 0.05, n)
    shift = 0.15 * share / cv
    change = rng.integers(2, 7, n)  # months after the first analysis
    series = rng.standard_normal((n, WINDOW + ROLLS))
    series[:, WINDOW:] += shift[:, None] * (np.arange(ROLLS)[None, :] >= change[:, None])
    first = cusum_first_alarm(standardised(series, known), k, h)
    early = first < change
    return false, ((first >= change) & (first < change + 3) & ~early).mean(), ((first >= change) & (first < change + 6)).mean()


for known in (False, True):
    print("sequential monitor (CUSUM), level and noise", "known exactly (the ceiling)" if known else "estimated from the 36 periods")
    for k, h in ((0.5, 4.5), (0.75, 3.5), (0.75, 4.0), (1.0, 3.0), (1.0, 3.5)):
        f, w3, w6 = monitor(k, h, known)
        print("  k %.2f, h %.1f: stable alerted over the year %5.2f %%, shifted alerted within 3 %5.1f %%, within 6 %5.1f %%"
              % (k, h, 100 * f, 100 * w3, 100 * w6))
