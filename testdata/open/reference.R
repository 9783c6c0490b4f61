# reference.R: base-R reference accuracies for the open datasets and Iris.
#
# Usage: Rscript testdata/open/reference.R   (from any folder)
# Writes reference.csv beside this script with one row per dataset and seed:
#   dataset, seed, pooled_accuracy, fold_mean, fold_sd, rows_used
#
# Method, for each dataset and each seed 1..10:
# - Rows: complete rows only (no empty or NA cell); rows_used counts them.
# - Classes: the distinct target values, sorted by byte value.
# - Inputs: every column but the target. Numeric columns are standardized
#   with the mean and standard deviation (n - 1 denominator) of the training
#   rows of the fold only; a column constant on the training rows is only
#   centred. Text columns are one-hot coded with model.matrix's treatment
#   contrasts: one 0/1 column per level but the first (levels sorted by byte
#   value, taken from all rows); with the intercept this spans the same space
#   as one column per level.
# - Model: two classes: glm(family = binomial) for the second class,
#   predicted when the linear predictor is > 0. More classes: one lm per
#   class on its 0/1 indicator (one-vs-rest), predicted class the one with
#   the largest fitted value (first class on a tie).
# - Stratified 10-fold assignment (assign_folds): set.seed(seed) with R's
#   default generators (Mersenne-Twister, Inversion, Rejection); then for
#   each class in order, its rows (in file order) are shuffled with
#   sample.int and dealt to folds 1, 2, ..., 10, 1, 2, ... with the count
#   carried on from the previous class, so fold sizes differ by at most one
#   and each class's count differs by at most one between folds.
# - pooled_accuracy: correct / rows_used over all out-of-fold predictions;
#   fold_mean and fold_sd: mean and standard deviation (n - 1) of the ten
#   per-fold accuracies.
# For unpenalized least squares and logistic regression with an intercept
# the standardization does not change the predictions (an affine change of
# each input); it is done so the inputs match what a scaled learner sees.

RNGkind("Mersenne-Twister", "Inversion", "Rejection")
invisible(Sys.setlocale("LC_COLLATE", "C"))

folds_count <- 10
seeds <- 1:10

script_arg <- grep("^--file=", commandArgs(trailingOnly = FALSE), value = TRUE)
if (length(script_arg) != 1) {
  stop("run as: Rscript testdata/open/reference.R", call. = FALSE)
}
here <- dirname(normalizePath(sub("^--file=", "", script_arg)))

datasets <- list(
  list(name = "iris", file = file.path(here, "..", "iris.csv"), target = "species"),
  list(name = "spam", file = file.path(here, "spam.csv"), target = "type"),
  list(name = "crabs", file = file.path(here, "crabs.csv"), target = "species"),
  list(name = "birthwt", file = file.path(here, "birthwt.csv"), target = "low"),
  list(name = "mlc_churn", file = file.path(here, "mlc_churn.csv"), target = "churn")
)

# byte_levels returns the distinct values of x sorted by byte value.
byte_levels <- function(x) sort(unique(as.character(x)), method = "radix")

# read_dataset reads a CSV and returns its complete rows as the class factor
# `target`, the design matrix `inputs` (no intercept column) and the logical
# `numeric` marking the columns of `inputs` that are standardized.
read_dataset <- function(file, target) {
  frame <- read.csv(file, stringsAsFactors = FALSE, check.names = FALSE,
                    na.strings = c("", "NA"))
  if (!target %in% names(frame)) {
    stop(sprintf("%s: no column %s", file, target), call. = FALSE)
  }
  frame <- frame[complete.cases(frame), , drop = FALSE]
  classes <- factor(as.character(frame[[target]]),
                    levels = byte_levels(frame[[target]]))
  features <- frame[setdiff(names(frame), target)]
  is_numeric <- vapply(features, is.numeric, logical(1))
  for (name in names(features)[!is_numeric]) {
    features[[name]] <- factor(features[[name]],
                               levels = byte_levels(features[[name]]))
  }
  design <- model.matrix(~ ., data = features,
                         contrasts.arg = lapply(features[!is_numeric],
                                                function(f) "contr.treatment"))
  term <- attr(design, "assign")
  keep <- term != 0
  inputs <- design[, keep, drop = FALSE]
  numeric <- is_numeric[term[keep]]
  colnames(inputs) <- sprintf("x%d", seq_len(ncol(inputs)))
  list(target = classes, inputs = inputs, numeric = unname(numeric))
}

# assign_folds returns the fold (1..k) of each row, stratified by class as
# described at the top of this file.
assign_folds <- function(classes, k, seed) {
  set.seed(seed)
  fold <- integer(length(classes))
  dealt <- 0
  for (level in levels(classes)) {
    rows <- which(classes == level)
    rows <- rows[sample.int(length(rows))]
    fold[rows] <- (dealt + seq_along(rows) - 1) %% k + 1
    dealt <- (dealt + length(rows)) %% k
  }
  fold
}

# standardize scales the numeric columns of train and test with the mean
# and standard deviation of train.
standardize <- function(train, test, numeric) {
  columns <- which(numeric)
  centre <- colMeans(train[, columns, drop = FALSE])
  spread <- apply(train[, columns, drop = FALSE], 2, sd)
  spread[spread == 0] <- 1
  train[, columns] <- sweep(sweep(train[, columns, drop = FALSE], 2, centre), 2, spread, "/")
  test[, columns] <- sweep(sweep(test[, columns, drop = FALSE], 2, centre), 2, spread, "/")
  list(train = train, test = test)
}

# predict_classes fits on the training rows and returns the predicted
# class of each test row.
predict_classes <- function(train, train_classes, test) {
  labels <- levels(train_classes)
  test_frame <- as.data.frame(test)
  if (length(labels) == 2) {
    frame <- data.frame(y = as.integer(train_classes == labels[2]), train)
    model <- glm(y ~ ., family = binomial, data = frame)
    link <- predict(model, newdata = test_frame, type = "link")
    return(ifelse(link > 0, labels[2], labels[1]))
  }
  scores <- vapply(labels, function(label) {
    frame <- data.frame(y = as.double(train_classes == label), train)
    model <- lm(y ~ ., data = frame)
    predict(model, newdata = test_frame)
  }, numeric(nrow(test)))
  scores <- matrix(scores, nrow = nrow(test))
  labels[max.col(scores, ties.method = "first")]
}

warning_counts <- list()

# note_warning tallies a warning under the dataset's name and muffles it.
note_warning <- function(dataset, condition) {
  key <- paste(dataset, conditionMessage(condition), sep = ": ")
  previous <- warning_counts[[key]]
  warning_counts[[key]] <<- if (is.null(previous)) 1 else previous + 1
  invokeRestart("muffleWarning")
}

results <- list()
for (dataset in datasets) {
  data <- read_dataset(dataset$file, dataset$target)
  rows <- length(data$target)
  for (seed in seeds) {
    fold <- assign_folds(data$target, folds_count, seed)
    correct <- logical(rows)
    fold_accuracy <- numeric(folds_count)
    for (k in seq_len(folds_count)) {
      test_rows <- which(fold == k)
      train_rows <- which(fold != k)
      scaled <- standardize(data$inputs[train_rows, , drop = FALSE],
                            data$inputs[test_rows, , drop = FALSE],
                            data$numeric)
      predicted <- withCallingHandlers(
        predict_classes(scaled$train, data$target[train_rows], scaled$test),
        warning = function(condition) note_warning(dataset$name, condition))
      correct[test_rows] <- predicted == as.character(data$target[test_rows])
      fold_accuracy[k] <- mean(correct[test_rows])
    }
    results[[length(results) + 1]] <- data.frame(
      dataset = dataset$name,
      seed = seed,
      pooled_accuracy = sprintf("%.6f", mean(correct)),
      fold_mean = sprintf("%.6f", mean(fold_accuracy)),
      fold_sd = sprintf("%.6f", sd(fold_accuracy)),
      rows_used = rows
    )
  }
}
table <- do.call(rbind, results)
write.csv(table, file.path(here, "reference.csv"), row.names = FALSE,
          quote = FALSE, eol = "\n")

cat(R.version.string, "\n")
cat("pooled accuracy over seeds", paste(range(seeds), collapse = ".."), "\n")
pooled <- as.numeric(table$pooled_accuracy)
for (name in unique(table$dataset)) {
  values <- pooled[table$dataset == name]
  cat(sprintf("%-10s mean %.6f  sd %.6f  min %.6f  max %.6f\n",
              name, mean(values), sd(values), min(values), max(values)))
}
if (length(warning_counts) > 0) {
  cat("warnings (count over all folds and seeds):\n")
  for (key in names(warning_counts)) {
    cat(sprintf("  %s (%d)\n", key, warning_counts[[key]]))
  }
}
