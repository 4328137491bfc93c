#!/usr/bin/env Rscript
# Golden values for internal/fit's step model (TestCrosscheckStep).
#
# A step cost is piecewise constant in the activity. With the observations
# sorted by activity (no ties here), its best split into m + 1 levels of at
# least h observations is the least-squares partition of a mean into m + 1
# segments, which strucchange::breakpoints(y ~ 1, h = h) finds by Bai and
# Perron's dynamic programme, an implementation independent of ours. Its
# breakpoints are the index of the last observation of each segment but the
# last; its RSS for m breaks is taken from summary()$RSS.
#
# segmented (r-cran-segmented) is NOT used: it fits continuous broken lines,
# which cannot jump, so its breakpoints and RSS are not comparable with a
# step's.
#
# The data are draws from R's Mersenne-Twister with the seeds below and stand
# for nothing real. Usage: Rscript scripts/crosscheck/steps.R OUTPUT.json
suppressPackageStartupMessages(library(strucchange))

args <- commandArgs(trailingOnly = TRUE)
if (length(args) != 1) stop("usage: steps.R OUTPUT.json")

H <- 3          # minPerLevel
MAX_BREAKS <- 3 # maxLevels 4

num <- function(v) paste(sprintf("%.17g", v), collapse = ", ")

make_case <- function(i) {
  set.seed(500 + i)
  n <- sample(12:40, 1)
  levels <- sample(2:4, 1)
  # Distinct integer activity levels, so that no tie constrains the split.
  x <- sample(100:400, n)
  cuts <- sort(sample(x, levels - 1))
  heights <- cumsum(c(runif(1, 1000, 5000), runif(levels - 1, 200, 2000)))
  group <- findInterval(x, cuts + 0.5) + 1
  noise <- c(20, 100, 400)[1 + i %% 3]
  y <- heights[group] + rnorm(n, 0, noise)
  list(name = sprintf("step-%02d", i), seed = 500 + i, x = x, y = y)
}

solve_case <- function(cs) {
  o <- order(cs$x)
  ys <- cs$y[o]
  bp <- breakpoints(ys ~ 1, h = H, breaks = MAX_BREAKS)
  rss <- summary(bp)$RSS["RSS", ]
  models <- character(0)
  for (m in seq_len(MAX_BREAKS)) {
    b <- breakpoints(bp, breaks = m)$breakpoints
    if (any(is.na(b))) next
    models <- c(models, sprintf(
      "    {\"breaks\": %d, \"last_of_segment\": [%s], \"rss\": %s}",
      m, paste(b, collapse = ", "), sprintf("%.17g", rss[[as.character(m)]])))
  }
  sprintf(paste0(
    "  {\"name\": \"%s\", \"seed\": %d, \"h\": %d,\n",
    "   \"x\": [%s],\n   \"y\": [%s],\n   \"models\": [\n%s\n   ]}"),
    cs$name, cs$seed, H, num(cs$x), num(cs$y), paste(models, collapse = ",\n"))
}

cases <- vapply(0:11, function(i) solve_case(make_case(i)), "")
out <- paste0(
  "{\"generator\": \"scripts/crosscheck/steps.R\",\n",
  " \"versions\": {\"R\": \"", paste(R.version$major, R.version$minor, sep = "."),
  "\", \"strucchange\": \"", as.character(packageVersion("strucchange")), "\"},\n",
  " \"cases\": [\n", paste(cases, collapse = ",\n"), "\n ]}\n")
writeLines(out, args[[1]], sep = "")
