# convert.R: writes spam.csv, crabs.csv, birthwt.csv and mlc_churn.csv from
# the data files of three unpacked Debian packages.
#
# Usage: Rscript convert.R ROOT OUT
#   ROOT holds the packages unpacked with `dpkg-deb -x PKG.deb ROOT/PKG`
#        for PKG in r-cran-kernlab, r-cran-mass, r-cran-modeldata;
#   OUT  is the folder the CSV files are written to.
#
# Needs base R only (no package is attached or installed): spam.rda is read
# with load(), the lazy-load databases data/Rdata.{rdb,rdx} of MASS and
# modeldata with lazyLoad(). Each written file is read back and compared
# with the data frame it was written from; any difference stops the script.
# See PROVENANCE.md beside this script for the choices made per dataset.

args <- commandArgs(trailingOnly = TRUE)
if (length(args) != 2) {
  stop("usage: Rscript convert.R ROOT OUT", call. = FALSE)
}
root <- args[[1]]
out <- args[[2]]

kernlab_dir <- file.path(root, "r-cran-kernlab/usr/lib/R/site-library/kernlab")
mass_dir <- file.path(root, "r-cran-mass/usr/lib/R/library/MASS")
modeldata_dir <- file.path(root, "r-cran-modeldata/usr/lib/R/site-library/modeldata")

# read_rda returns the object `name` stored in an .rda file.
read_rda <- function(path, name) {
  env <- new.env()
  load(path, envir = env)
  get(name, envir = env, inherits = FALSE)
}

# read_lazy_data returns the object `name` from a package's lazy-load data
# database (data/Rdata.rdb with its index data/Rdata.rdx).
read_lazy_data <- function(package_dir, name) {
  env <- new.env()
  lazyLoad(file.path(package_dir, "data", "Rdata"), envir = env)
  get(name, envir = env, inherits = FALSE)
}

# snake_case turns camelCase names into lower-case names joined by "_".
snake_case <- function(names) {
  tolower(gsub("([a-z0-9])([A-Z])", "\\1_\\2", names))
}

# as_plain_frame drops subclasses such as tibble's and turns factors into
# character columns, so what is written is what is compared after reading.
as_plain_frame <- function(frame) {
  frame <- as.list(frame)
  frame <- lapply(frame, function(column) {
    if (is.factor(column)) as.character(column) else column
  })
  as.data.frame(frame, stringsAsFactors = FALSE, optional = TRUE)
}

# same_values reports whether a column read back from CSV holds the values
# written: text exactly, numbers as the same doubles (read.csv reads a
# double column of whole numbers as integer, which is no difference).
same_values <- function(read, written) {
  if (is.character(written)) {
    return(identical(read, written))
  }
  is.numeric(read) && identical(as.double(read), as.double(written))
}

# write_checked writes frame as CSV (header, no row names, no quotes, "\n"
# line ends, numbers with 15 significant digits) and stops unless reading
# the file back gives the same names and values.
write_checked <- function(frame, file, rows, columns) {
  frame <- as_plain_frame(frame)
  if (nrow(frame) != rows || ncol(frame) != columns) {
    stop(sprintf("%s: expected %d rows x %d columns, have %d x %d",
                 file, rows, columns, nrow(frame), ncol(frame)), call. = FALSE)
  }
  if (anyNA(frame)) {
    stop(sprintf("%s: data has missing values", file), call. = FALSE)
  }
  text <- unlist(lapply(frame, function(column) {
    if (is.character(column)) column
  }))
  if (any(grepl("[,\"\n\r]", c(names(frame), text))) ||
      any(grepl("[^ -~]", c(names(frame), text)))) {
    stop(sprintf("%s: a name or label needs quoting or is not ASCII", file),
         call. = FALSE)
  }
  path <- file.path(out, file)
  write.csv(frame, path, row.names = FALSE, quote = FALSE, eol = "\n")
  back <- read.csv(path, stringsAsFactors = FALSE, check.names = FALSE)
  if (!identical(names(back), names(frame)) ||
      !all(mapply(same_values, back, frame))) {
    stop(sprintf("%s: reading the file back does not give the data written",
                 file), call. = FALSE)
  }
  cat(sprintf("%s: %d rows, %d columns\n", file, nrow(frame), ncol(frame)))
}

# spam (kernlab): 57 frequency and run-length columns, class `type`.
spam <- read_rda(file.path(kernlab_dir, "data", "spam.rda"), "spam")
names(spam) <- snake_case(names(spam))
stopifnot(identical(as.vector(table(spam$type)), c(2788L, 1813L)))
write_checked(spam, "spam.csv", rows = 4601, columns = 58)

# crabs (MASS): target `species` (blue/orange, R's `sp`), `sex` kept as a
# feature, `index` (row number within each species x sex group) dropped.
crabs <- read_lazy_data(mass_dir, "crabs")
crabs <- data.frame(
  sex = c(F = "female", M = "male")[as.character(crabs$sex)],
  frontal_lobe = crabs$FL,
  rear_width = crabs$RW,
  carapace_length = crabs$CL,
  carapace_width = crabs$CW,
  body_depth = crabs$BD,
  species = c(B = "blue", O = "orange")[as.character(crabs$sp)],
  stringsAsFactors = FALSE
)
rownames(crabs) <- NULL
write_checked(crabs, "crabs.csv", rows = 200, columns = 7)

# birthwt (MASS): target `low` (1 when birth weight < 2.5 kg) moved last;
# `bwt` (the birth weight that defines `low`) dropped; `race` as labels.
birthwt <- read_lazy_data(mass_dir, "birthwt")
stopifnot(identical(birthwt$low, as.integer(birthwt$bwt < 2500)))
birthwt$race <- c("white", "black", "other")[birthwt$race]
birthwt <- birthwt[c("age", "lwt", "race", "smoke", "ptl", "ht", "ui", "ftv",
                     "low")]
rownames(birthwt) <- NULL
write_checked(birthwt, "birthwt.csv", rows = 189, columns = 9)

# mlc_churn (modeldata): as distributed, target `churn` already last.
churn <- read_lazy_data(modeldata_dir, "mlc_churn")
write_checked(churn, "mlc_churn.csv", rows = 5000, columns = 20)
