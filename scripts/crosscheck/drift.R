#!/usr/bin/env Rscript
# Golden values for internal/drift (TestCrosscheckDrift).
#
# For each seeded series, what R's strucchange computes:
#   Fstats(formula, from = 0.15)        from, to, lambda, the F sequence
#   sctest(fs, type = "supF")           sup-F and its Hansen (1997) p-value
#   sctest(fs, type = "aveF"/"expF")    ave-F and exp-F statistics
#   breakpoints(fs)$breakpoints         the dated break (last observation of
#                                       the first segment)
#   sctest(formula, type = "Chow")      Chow F and p at the planted break
#                                       (at floor(n/2) when none is planted)
#   efp(formula, type = "OLS-CUSUM")    the process (leading 0 included),
#                                       sctest statistic and p-value
#   efp(formula, type = "Rec-CUSUM")    the same for recursive residuals
#
# Series: mean shifts (cost ~ 1), shifts in rate or fixed part with one
# driver (cost ~ x1), two drivers (cost ~ x1 + x2), lines through the origin
# (cost ~ 0 + x1), and series without a break, n from 24 to 60. The data are
# draws from R's Mersenne-Twister with the seeds below and stand for nothing
# real. Usage: Rscript scripts/crosscheck/drift.R OUTPUT.json
suppressPackageStartupMessages(library(strucchange))

args <- commandArgs(trailingOnly = TRUE)
if (length(args) != 1) stop("usage: drift.R OUTPUT.json")

num <- function(v) paste(sprintf("%.17g", v), collapse = ", ")

# model: "mean" (y ~ 1), "line" (y ~ x1), "two" (y ~ x1 + x2),
# "origin" (y ~ 0 + x1). brk: last period of the old behaviour, 0 for none.
# shift: relative change of the level (mean), of the rate (line, two, origin)
# or, with fixed = TRUE, of the fixed part (line). noise: SD as a share of
# the mean cost.
specs <- list(
  list(model = "mean", n = 24, brk = 12, shift = 0.15, noise = 0.05),
  list(model = "mean", n = 25, brk = 13, shift = 0.10, noise = 0.04),
  list(model = "mean", n = 30, brk = 16, shift = 0.10, noise = 0.04),
  list(model = "mean", n = 36, brk = 20, shift = -0.12, noise = 0.05),
  list(model = "mean", n = 36, brk = 8, shift = 0.20, noise = 0.05),
  list(model = "mean", n = 48, brk = 30, shift = 0.08, noise = 0.03),
  list(model = "mean", n = 60, brk = 45, shift = 0.06, noise = 0.03),
  list(model = "mean", n = 60, brk = 12, shift = 0.05, noise = 0.05),
  list(model = "line", n = 24, brk = 14, shift = 0.25, noise = 0.03),
  list(model = "line", n = 30, brk = 15, shift = 0.20, noise = 0.03),
  list(model = "line", n = 36, brk = 20, shift = -0.15, noise = 0.04),
  list(model = "line", n = 36, brk = 24, shift = 0.10, noise = 0.02),
  list(model = "line", n = 48, brk = 20, shift = 0.15, noise = 0.04),
  list(model = "line", n = 60, brk = 40, shift = 0.12, noise = 0.03),
  list(model = "line", n = 36, brk = 18, shift = 0.30, noise = 0.03, fixed = TRUE),
  list(model = "mean", n = 24, brk = 0, shift = 0, noise = 0.05),
  list(model = "mean", n = 36, brk = 0, shift = 0, noise = 0.05),
  list(model = "mean", n = 60, brk = 0, shift = 0, noise = 0.05),
  list(model = "line", n = 24, brk = 0, shift = 0, noise = 0.04),
  list(model = "line", n = 36, brk = 0, shift = 0, noise = 0.04),
  list(model = "line", n = 60, brk = 0, shift = 0, noise = 0.04),
  list(model = "two", n = 24, brk = 12, shift = 0.25, noise = 0.03),
  list(model = "two", n = 36, brk = 0, shift = 0, noise = 0.03),
  list(model = "origin", n = 30, brk = 15, shift = 0.15, noise = 0.04),
  list(model = "origin", n = 36, brk = 0, shift = 0, noise = 0.04)
)

make_case <- function(i, s) {
  seed <- 700 + i
  set.seed(seed)
  n <- s$n
  after <- if (s$brk > 0) seq_len(n) > s$brk else rep(FALSE, n)
  x1 <- round(runif(n, 200, 800))
  x2 <- round(runif(n, 50, 150))
  fixed <- runif(1, 2000, 8000)
  rate <- runif(1, 5, 20)
  rate2 <- runif(1, 10, 40)
  level <- runif(1, 5000, 20000)
  isfixed <- !is.null(s$fixed) && s$fixed
  mu <- switch(s$model,
    mean = level * ifelse(after, 1 + s$shift, 1),
    line = if (isfixed) fixed * ifelse(after, 1 + s$shift, 1) + rate * x1
           else fixed + rate * ifelse(after, 1 + s$shift, 1) * x1,
    two = fixed + rate * ifelse(after, 1 + s$shift, 1) * x1 + rate2 * x2,
    origin = rate * ifelse(after, 1 + s$shift, 1) * x1)
  y <- mu + rnorm(n, 0, s$noise * mean(mu))
  x <- switch(s$model, mean = list(), line = list(x1), two = list(x1, x2),
              origin = list(x1))
  kind <- if (s$brk == 0) "none" else if (s$model == "mean") "level"
          else if (isfixed) "fixed" else "rate"
  list(name = sprintf("%s-%s-n%d-%02d", s$model, kind, n, i), seed = seed,
       model = s$model, brk = s$brk, x = x, y = y, x1 = x1, x2 = x2)
}

solve_case <- function(cs) {
  d <- data.frame(y = cs$y, x1 = cs$x1, x2 = cs$x2)
  f <- switch(cs$model, mean = y ~ 1, line = y ~ x1, two = y ~ x1 + x2,
              origin = y ~ 0 + x1)
  n <- length(cs$y)
  # Fstats warns when it moves 'from' or 'to' to keep k + 1 observations in
  # each segment; the moved values are recorded below.
  fs <- suppressWarnings(Fstats(f, from = 0.15, data = d))
  # Fstats keeps the candidate range only as the time base of its
  # statistics, which start at from/n and end at to/n.
  from <- round(tsp(fs$Fstats)[1] * n)
  to <- round(tsp(fs$Fstats)[2] * n)
  sup <- sctest(fs, type = "supF")
  ave <- sctest(fs, type = "aveF")
  ex <- sctest(fs, type = "expF")
  point <- if (cs$brk > 0) cs$brk else floor(n / 2)
  chow <- sctest(f, type = "Chow", point = point, data = d)
  ols <- efp(f, type = "OLS-CUSUM", data = d)
  olst <- sctest(ols)
  rec <- efp(f, type = "Rec-CUSUM", data = d)
  rect <- sctest(rec)
  xs <- if (length(cs$x) == 0) "" else
    paste(vapply(cs$x, function(v) sprintf("[%s]", num(v)), ""), collapse = ", ")
  sprintf(paste0(
    "  {\"name\": \"%s\", \"seed\": %d, \"model\": \"%s\", \"intercept\": %s,",
    " \"planted_break\": %d,\n",
    "   \"x\": [%s],\n   \"y\": [%s],\n",
    "   \"fstats\": {\"from\": %d, \"to\": %d, \"nreg\": %d, \"lambda\": %s,\n",
    "    \"F\": [%s],\n",
    "    \"sup_f\": %s, \"p_hansen\": %s, \"breakpoint\": %d, \"rss_at_break\": %s,\n",
    "    \"ave_f\": %s, \"exp_f\": %s},\n",
    "   \"chow\": {\"point\": %d, \"F\": %s, \"p\": %s},\n",
    "   \"ols_cusum\": {\"process\": [%s],\n    \"statistic\": %s, \"p\": %s},\n",
    "   \"rec_cusum\": {\"process\": [%s],\n    \"statistic\": %s, \"p\": %s}}"),
    cs$name, cs$seed, cs$model, if (cs$model == "origin") "false" else "true",
    cs$brk, xs, num(cs$y),
    from, to, fs$nreg, sprintf("%.17g", fs$par), num(as.numeric(fs$Fstats)),
    sprintf("%.17g", sup$statistic), sprintf("%.17g", sup$p.value),
    breakpoints(fs)$breakpoints, sprintf("%.17g", fs$RSS),
    sprintf("%.17g", ave$statistic), sprintf("%.17g", ex$statistic),
    point, sprintf("%.17g", chow$statistic), sprintf("%.17g", chow$p.value),
    num(as.numeric(ols$process)), sprintf("%.17g", olst$statistic),
    sprintf("%.17g", olst$p.value),
    num(as.numeric(rec$process)), sprintf("%.17g", rect$statistic),
    sprintf("%.17g", rect$p.value))
}

cases <- vapply(seq_along(specs), function(i) solve_case(make_case(i - 1, specs[[i]])), "")
out <- paste0(
  "{\"generator\": \"scripts/crosscheck/drift.R\",\n",
  " \"versions\": {\"R\": \"", paste(R.version$major, R.version$minor, sep = "."),
  "\", \"strucchange\": \"", as.character(packageVersion("strucchange")), "\"},\n",
  " \"cases\": [\n", paste(cases, collapse = ",\n"), "\n ]}\n")
writeLines(out, args[[1]], sep = "")
