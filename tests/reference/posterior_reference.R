# Reference values for covey's convergence diagnostics, computed by R's posterior package
# (Vehtari, Gelman, Simpson, Carpenter & Buerkner 2021) on the draws the C++ tests write.
#
#   Rscript posterior_reference.R summary OUT.csv IN1.csv [IN2.csv ...]
#     IN: a header with columns chain, iteration and one column per quantity.
#     OUT: one row per input quantity: file, name, mean, rhat, ess_bulk, ess_tail, ess_mean,
#          mcse_mean, printed with 17 significant digits (NA, Inf as R writes them).
#   Rscript posterior_reference.R zscale OUT.csv IN.csv
#     IN: one column `value`; OUT: one column `z`, posterior's z_scale (rank normalization).
# The first line of OUT names the posterior version, as "# posterior <version>".
suppressPackageStartupMessages(library(posterior))

args <- commandArgs(trailingOnly = TRUE)
if (length(args) < 3) stop("usage: posterior_reference.R summary|zscale OUT.csv IN.csv ...")
mode <- args[1]
out_path <- args[2]
inputs <- args[-(1:2)]

num <- function(x) sprintf("%.17g", x)

# The draws of one quantity as an iterations x chains matrix, chains by label, iterations
# in order.
draws_matrix <- function(table, column) {
  chains <- sort(unique(table$chain))
  cols <- lapply(chains, function(ch) {
    rows <- table[table$chain == ch, ]
    rows[order(rows$iteration), column]
  })
  do.call(cbind, cols)
}

lines <- paste("# posterior", as.character(packageVersion("posterior")))
if (mode == "summary") {
  lines <- c(lines, "file,name,mean,rhat,ess_bulk,ess_tail,ess_mean,mcse_mean")
  for (path in inputs) {
    table <- read.csv(path, check.names = FALSE)
    for (column in setdiff(names(table), c("chain", "iteration"))) {
      x <- draws_matrix(table, column)
      # posterior warns when it caps an ESS; the capped value is what is compared.
      values <- suppressWarnings(c(mean(x), rhat(x), ess_bulk(x), ess_tail(x), ess_mean(x),
                                   mcse_mean(x)))
      lines <- c(lines, paste(c(basename(path), column, num(values)), collapse = ","))
    }
  }
} else if (mode == "zscale") {
  table <- read.csv(inputs[1])
  lines <- c(lines, "z", num(z_scale(table$value)))
} else {
  stop("unknown mode ", mode)
}
writeLines(lines, out_path)
