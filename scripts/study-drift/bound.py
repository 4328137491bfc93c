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
