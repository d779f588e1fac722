# Live reference check of bayline's ARL computations and calibrated critical values against R's spc
# package (Debian r-cran-spc; S. Knoth's Nystroem/Gauss-Legendre solutions of the ARL integral
# equations). The probe prints, for ARL0 in {100, 370, 500, 1000} and design shifts 0.5..3 sd, the
# calibrated two-sided CUSUM (k = D/2, h) and EWMA (lambda, L; asymptotic "fix" and exact "vacl"
# limits) and their ARLs at shifts 0..3. Every value must agree with spc within 2%.
#   spc conventions used like for like: xcusum.arl(k, h, mu, sided = "two") combines the one-sided
#   chains exactly as bayline's CusumArl does; xewma.arl/xewma.crit's c is our L (in units of the
#   asymptotic EWMA sd), limits = "fix" = EwmaLimits::kAsymptotic, "vacl" = EwmaLimits::kExact.
suppressMessages(library(spc))

bin <- Sys.getenv("BAYLINE_BINARY_DIR")
probe <- file.path(bin, "tests", "reference", "detect", "bayline_charts_probe")
if (!file.exists(probe)) {
  cat("probe not built:", probe, "\n")
  quit(status = 1)
}
rows <- read.csv(text = system2(probe, "table", stdout = TRUE))
if (nrow(rows) != 4 * 6 * 3 * 7) {
  cat("unexpected probe output:", nrow(rows), "rows\n")
  quit(status = 1)
}

tol <- 0.02
failures <- 0
check <- function(what, ours, theirs) {
  rel <- abs(ours / theirs - 1)
  if (!is.finite(rel) || rel > tol) {
    cat(sprintf("MISMATCH %s: bayline %.6g, spc %.6g (rel %.4f)\n", what, ours, theirs, rel))
    failures <<- failures + 1
  }
  rel
}

worst <- c(h = 0, L = 0, cusum_arl = 0, ewma_arl = 0)
designs <- unique(rows[, c("chart", "limits", "arl0", "design_shift", "p1", "p2")])
for (i in seq_len(nrow(designs))) {
  d <- designs[i, ]
  tag <- sprintf("%s/%s arl0=%g D=%g", d$chart, d$limits, d$arl0, d$design_shift)
  sel <- rows[rows$chart == d$chart & rows$limits == d$limits & rows$arl0 == d$arl0 &
              rows$design_shift == d$design_shift, ]
  if (d$chart == "cusum") {
    # spc: critical value h of the two-sided CUSUM with reference value k for in-control ARL L0.
    h <- xcusum.crit(d$p1, d$arl0, sided = "two")
    worst["h"] <- max(worst["h"], check(paste(tag, "h"), d$p2, h))
    for (j in seq_len(nrow(sel))) {
      a <- xcusum.arl(d$p1, d$p2, sel$shift[j], sided = "two")
      worst["cusum_arl"] <- max(worst["cusum_arl"],
                                check(sprintf("%s ARL(%g)", tag, sel$shift[j]), sel$arl[j], a))
    }
  } else {
    L <- xewma.crit(d$p1, d$arl0, sided = "two", limits = d$limits)
    worst["L"] <- max(worst["L"], check(paste(tag, "L"), d$p2, L))
    for (j in seq_len(nrow(sel))) {
      a <- xewma.arl(d$p1, d$p2, sel$shift[j], sided = "two", limits = d$limits)
      worst["ewma_arl"] <- max(worst["ewma_arl"],
                               check(sprintf("%s ARL(%g)", tag, sel$shift[j]), sel$arl[j], a))
    }
  }
}
cat("largest relative differences vs spc:\n")
print(signif(worst, 3))
if (failures > 0) {
  cat(failures, "mismatches\n")
  quit(status = 1)
}
cat("all", nrow(rows), "ARLs and", nrow(designs), "critical values within 2% of spc\n")
