# Temperature reference: R stats::optimize on the weighted log loss over T.
# Usage: Rscript temperature_optimize.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
source(file.path(dirname(sub("^--file=", "", grep("^--file=", commandArgs(), value = TRUE))),
                 "parametric_cases.R"))
cases <- parametric_cases()
scales <- c(pima = "probability", pima_logit = "logit", biopsy = "probability", sim = "probability")
answers <- NULL
for (name in names(scales)) {
  d <- cases[[name]]
  write_full(d, file.path(out, paste0(name, "_rows.csv")))
  z <- if (scales[[name]] == "probability") qlogis(clip(d$score)) else d$score
  y <- d$label
  w <- d$weight
  loss <- function(T) -sum(w * (y * plogis(z / T, log.p = TRUE) +
                                (1 - y) * plogis(-z / T, log.p = TRUE))) / sum(w)
  o <- optimize(loss, interval = c(0.01, 50), tol = 1e-12)
  answers <- rbind(answers, data.frame(case = case_ids[[name]], temperature = o$minimum, loss = o$objective))
}
write_full(answers, file.path(out, "temperature_answers.csv"))
