# Extra check values for package survival, beyond those of shared/reference/README.md:
# log-log and plain intervals, and quantiles with their confidence limits for
# several probabilities and interval types, printed by R survival::survfit.
# Run from this folder (it reads the data CSVs copied here and writes
# days_synthetic.csv, km_conf_types.csv, km_quantiles.csv and km_medians_print.csv):
#   Rscript km_extra.R
# Produced with R 4.2.2 (Debian r-base-core 4.2.2.20221110-2) and survival
# 3.5.3 (Debian r-cran-survival 3.5-3-1), the versions of the shared reference.
library(survival)
cat("R", as.character(getRversion()), "survival", as.character(packageVersion("survival")), "\n")

aml <- read.csv("aml.csv"); gehan <- read.csv("gehan.csv")
lung <- read.csv("lung.csv"); vet <- read.csv("veteran.csv")

# A synthetic whole-day data set with many ties of events and censorings at
# the same day, like gaps between order days.
set.seed(20240601)
nd <- 400
days <- data.frame(time = pmin(rgeom(nd, 0.04), 120L),
                   event = as.integer(runif(nd) < 0.7))
write.csv(days, "days_synthetic.csv", row.names = FALSE)

sets <- list(
  list(name = "aml", df = aml, time = "time", event = "status", by = "x"),
  list(name = "gehan", df = gehan, time = "time", event = "cens", by = "treat"),
  list(name = "lung", df = lung, time = "time", event = "event", by = NA),
  list(name = "veteran", df = vet, time = "time", event = "status", by = "trt"),
  list(name = "days", df = days, time = "time", event = "event", by = NA))
num <- function(v) ifelse(is.na(v), "NA", sprintf("%.17g", v))
tabs <- list(); qs <- list(); meds <- list()
probs <- c(0.1, 0.25, 0.5, 0.75, 0.9)
for (s in sets) {
  strata <- if (is.na(s$by)) list(all = s$df) else split(s$df, s$df[[s$by]])
  for (st in names(strata)) {
    d <- strata[[st]]
    for (ct in c("log", "log-log", "plain")) {
      fit <- survfit(Surv(d[[s$time]], d[[s$event]]) ~ 1, conf.type = ct)
      sm <- summary(fit, censored = FALSE)
      tabs[[length(tabs) + 1]] <- data.frame(dataset = s$name, stratum = st, conf_type = ct,
        time = sm$time, n_risk = sm$n.risk, n_event = sm$n.event, surv = num(sm$surv),
        se_surv = num(sm$std.err), lower = num(sm$lower), upper = num(sm$upper))
      q <- quantile(fit, probs = probs)
      qs[[length(qs) + 1]] <- data.frame(dataset = s$name, stratum = st, conf_type = ct,
        p = probs, quantile = num(q$quantile), lower = num(q$lower), upper = num(q$upper))
      tb <- summary(fit)$table  # what print(fit) shows: median, 0.95LCL, 0.95UCL
      meds[[length(meds) + 1]] <- data.frame(dataset = s$name, stratum = st, conf_type = ct,
        median = num(tb[["median"]]), lcl = num(tb[["0.95LCL"]]), ucl = num(tb[["0.95UCL"]]))
    }
  }
}
write.csv(do.call(rbind, tabs), "km_conf_types.csv", row.names = FALSE, quote = FALSE)
write.csv(do.call(rbind, qs), "km_quantiles.csv", row.names = FALSE, quote = FALSE)
write.csv(do.call(rbind, meds), "km_medians_print.csv", row.names = FALSE, quote = FALSE)
