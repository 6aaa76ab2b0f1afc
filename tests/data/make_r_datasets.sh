#!/bin/sh
# Writes nile_1871_1970.csv and co2_mauna_loa_1959_1997.csv from the
# `datasets` package of R (Debian package r-base-core, not needed by the
# tests: the CSV files are committed). Run from tests/data.
set -eu
Rscript -e 'write.csv(data.frame(year = as.integer(time(Nile)), flow = as.numeric(Nile)), "nile_1871_1970.csv", row.names = FALSE, quote = FALSE)'
Rscript -e 'write.csv(data.frame(year = sprintf("%.4f", as.numeric(time(co2))), co2 = sprintf("%.2f", as.numeric(co2))), "co2_mauna_loa_1959_1997.csv", row.names = FALSE, quote = FALSE)'
