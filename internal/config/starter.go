package config

// Starter is the commented configuration that `costdrift init` writes and
// that config/costdrift.example.yaml holds. Paths are relative to this file.
const Starter = `# costdrift configuration.
# Every key below shows its default. Environment variables override keys:
# COSTDRIFT_STORE=/var/lib/costdrift/costdrift.db, COSTDRIFT_ANALYSIS_WINDOW=24.
# Relative paths are relative to the folder of this file.

# The SQLite store. It is created owner-only (mode 0600): ledger data is
# confidential and can include payroll by cost centre.
store: costdrift.db

# Functional currency (ISO 4217). Amounts are stored as integer minor units.
currency: EUR

calendar:
  period: month            # month | week | 4-4-5 | 4-5-4 | 5-4-4 (see README)
  fiscal_year_start: 1     # month number the fiscal year starts in
  close_after_days: 10     # a period is analysed only this many days after its end

sources:
  # General-ledger lines. Canonical CSV header:
  #   entry_id, line, date, account, cost_center, amount, description
  # (amount signed, debit positive; or debit and credit columns instead).
  # Per source: columns (canonical name -> your header), delimiter (detected
  # when empty), date_format (e.g. DD.MM.YYYY), decimal_comma,
  # thousands_separator.
  ledger:
    - name: gl
      kind: csv
      path: data/gl/*.csv
  # Activity per period, long form (period, driver, value, cost_center, unit)
  # or wide form (period, then one column per driver).
  activity:
    - name: ops
      kind: csv
      path: data/activity.csv
  # Optional chart of accounts: account, name, type, group.
  accounts:
    - name: coa
      kind: csv
      path: data/accounts.csv

analysis:
  grain: account_cost_center   # account | account_cost_center
  accounts: ["5000-6999"]      # ranges and globs of accounts analysed; empty = all
  window: 36                   # periods analysed, ending at the newest closed period
  min_periods: 12              # fewer periods than this: insufficient_data
  lags: [0, 1]                 # periods a driver may lead the cost
  alpha: 0.05                  # significance level, after correction for the drivers tried
  break_alpha: 0.01            # a change in behaviour counts at this level (0: no break test)
  bootstrap_replicates: 999    # resamples behind a break's p-value

alerts:
  recipients:
    - email: costs@example.test
      cost_centers: ["*"]
      accounts: ["*"]
      min_severity: warning    # info | warning | critical

mail:
  smtp:
    host: ""                   # empty: messages go to the outbox folder
    port: 587
    tls: starttls              # starttls | tls | none (none only to a loopback host)
    username: ""
    password_env: COSTDRIFT_SMTP_PASSWORD   # the password is never written here
    password_file: ""          # or a file holding it, owner-only; used instead when set
    from: "costdrift <costdrift@example.test>"
  outbox: outbox

schedule:
  cron: "0 6 * * *"            # every day at 06:00; an optional leading seconds
                               # field and @every 30s, @hourly, @daily also work
  timezone: UTC

http:
  listen: ""                   # e.g. 127.0.0.1:9464 for /healthz and /metrics
  allow_remote: false          # true to listen on an address other than loopback

log:
  format: text                 # text | json
  level: info                  # debug | info | warn | error
`
