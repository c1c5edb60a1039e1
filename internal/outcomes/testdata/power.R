# Values for power_test.go: R 4.2.2 (Debian r-base-core 4.2.2.20221110-2),
# stats::power.prop.test, and an own R implementation of Fleiss's
# unequal-groups formula for the cases power.prop.test cannot do.
# Run from this folder: Rscript power.R
options(digits = 17)
cat(sprintf("%.17g\n", power.prop.test(p1 = .50, p2 = .75, power = .90)$n))
cat(sprintf("%.17g\n", power.prop.test(p1 = .50, p2 = .75, power = .90, tol = 1e-12)$n))
cat(sprintf("%.17g\n", power.prop.test(n = 77, p1 = .50, p2 = .75)$power))
cat(sprintf("%.17g\n", power.prop.test(n = 76, p1 = .50, p2 = .75)$power))
cat(sprintf("%.17g\n", power.prop.test(n = 100, p1 = 0.2, p2 = 0.3)$power))
cat(sprintf("%.17g\n", power.prop.test(n = 30, p1 = 0.4, p2 = 0.6, sig.level = 0.1)$power))
for (a in list(c(100, .3), c(500, .2), c(1000, .5), c(50, .6), c(2000, .1), c(250, .15))) {
  r <- power.prop.test(n = a[1], p2 = a[2], power = 0.8, tol = 1e-12)
  cat(sprintf("n=%g p2=%g p1=%.17g delta=%.17g\n", a[1], a[2], r$p1, a[2] - r$p1))
}
for (a in list(c(100, .3), c(500, .2))) {
  r <- power.prop.test(n = a[1], p1 = a[2], power = 0.8, tol = 1e-12)
  cat(sprintf("n=%g p1=%g p2=%.17g delta=%.17g\n", a[1], a[2], r$p2, r$p2 - a[2]))
}
# Unequal groups: z_a*sqrt(pbar*qbar*(1/n1+1/n2)) + z_b*sqrt(p1q1/n1+p2q2/n2) = delta,
# p1 = base - delta, p2 = base, pbar = (n1 p1 + n2 p2)/(n1 + n2).
mde <- function(n1, n2, base, alpha = 0.05, power = 0.8) {
  za <- qnorm(1 - alpha / 2); zb <- qnorm(power)
  f <- function(d) {
    p1 <- base - d; p2 <- base; pbar <- (n1 * p1 + n2 * p2) / (n1 + n2)
    za * sqrt(pbar * (1 - pbar) * (1 / n1 + 1 / n2)) + zb * sqrt(p1 * (1 - p1) / n1 + p2 * (1 - p2) / n2) - d
  }
  uniroot(f, c(1e-12, base), tol = 1e-14)$root
}
for (a in list(c(900, 100, .4), c(4500, 500, .25), c(120, 35, .6), c(300, 60, 1))) {
  cat(sprintf("n1=%g n2=%g base=%g delta=%.17g\n", a[1], a[2], a[3], mde(a[1], a[2], a[3])))
}
cat(sprintf("n1=%g n2=%g base=%g alpha=0.1 power=0.9 delta=%.17g\n", 900, 100, .4, mde(900, 100, .4, 0.1, 0.9)))
