# Makes the ComBat fixture of train/combat_test.go with R's sva::ComBat
# (Debian package r-bioc-sva). Run from this folder:
#
#   Rscript combat_fixture.R
#
# It writes input.csv (one row per participant: site, age, sex, then the
# features f1..f40) and, with the features harmonised by sva::ComBat on
# the model ~ age + sex, parametric.csv (par.prior = TRUE) and
# nonparametric.csv (par.prior = FALSE), in the same layout. The cohort
# is invented: three sites that shift and scale the features, and
# feature f1 constant within site "b" (which ComBat leaves unadjusted).
suppressPackageStartupMessages(library(sva))
set.seed(20261202)
n_site <- c(a = 12, b = 15, c = 18)
site <- rep(names(n_site), n_site)
n <- length(site)
G <- 40
age <- round(runif(n, 20, 70), 1)
sex <- rbinom(n, 1, 0.5)
shift <- c(a = 0, b = 0.8, c = -0.5)
scale <- c(a = 1, b = 1.6, c = 0.7)
dat <- matrix(0, G, n)
for (g in 1:G) {
  base <- rnorm(1, 0, 2)
  sdg <- runif(1, 0.5, 1.5)
  eff_age <- rnorm(1, 0, 0.03)
  eff_sex <- rnorm(1, 0, 0.4)
  site_shift <- shift[site] + rnorm(3, 0, 0.3)[match(site, names(n_site))]
  dat[g, ] <- base + eff_age * age + eff_sex * sex + site_shift +
    scale[site] * rnorm(n, 0, sdg)
}
dat[1, site == "b"] <- 0.25
mod <- model.matrix(~ age + sex)
par <- ComBat(dat, batch = site, mod = mod, par.prior = TRUE)
nonpar <- ComBat(dat, batch = site, mod = mod, par.prior = FALSE)
out <- function(x, path) {
  f <- t(x)
  colnames(f) <- paste0("f", 1:G)
  tab <- data.frame(site = site, age = trimws(formatC(age, digits = 17, format = "g")),
                    sex = sex, trimws(formatC(f, digits = 17, format = "g")))
  write.csv(tab, path, row.names = FALSE, quote = FALSE)
}
out(dat, "input.csv")
out(par, "parametric.csv")
out(nonpar, "nonparametric.csv")
cat("sva", as.character(packageVersion("sva")), "\n")
