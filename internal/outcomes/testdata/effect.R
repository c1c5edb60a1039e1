# Values for effect_test.go: R 4.2.2 (Debian r-base-core 4.2.2.20221110-2),
# an own implementation of Wilson's score interval and Newcombe's hybrid
# score interval (method 10), and the mde function of power.R.
# Run from this folder: Rscript effect.R
wil <- function(x, n, z = qnorm(.975)) { p <- x/n; c <- (2*n*p + z^2)/(2*(n+z^2)); h <- z*sqrt(z^2+4*n*p*(1-p))/(2*(n+z^2)); c(max(0,c-h), min(1,c+h)) }
nc <- function(x1,n1,x2,n2) { p1<-x1/n1; p2<-x2/n2; a<-wil(x1,n1); b<-wil(x2,n2); d<-p1-p2; c(d, d-sqrt((p1-a[1])^2+(b[2]-p2)^2), d+sqrt((a[2]-p1)^2+(p2-b[1])^2)) }
mde <- function(n1, n2, base, alpha = 0.05, power = 0.8) {
  za <- qnorm(1 - alpha / 2); zb <- qnorm(power)
  f <- function(d) { p1 <- base - d; p2 <- base; pbar <- (n1 * p1 + n2 * p2) / (n1 + n2)
    za * sqrt(pbar * (1 - pbar) * (1 / n1 + 1 / n2)) + zb * sqrt(p1 * (1 - p1) / n1 + p2 * (1 - p2) / n2) - d }
  if (f(base) > 0) return(NA); uniroot(f, c(1e-12, base), tol = 1e-14)$root }
for (a in list(c(700,2000,410,1000), c(820,2000,350,1000), c(333,900,41,100), c(120,300,40,100), c(10,25,1,3), c(3,200,10,50), c(10,40,0,30))) {
 r <- nc(a[1],a[2],a[3],a[4]); cat(sprintf("%s: d=%.17g lo=%.17g hi=%.17g mde=%.17g\n", paste(a, collapse=","), r[1], r[2], r[3], if (a[3] > 0) mde(a[2], a[4], a[3]/a[4]) else NA))
}
