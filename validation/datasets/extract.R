#!/usr/bin/Rscript
# Writes the open datasets the baselines checks use, as small CSV files beside this script.
# Run from anywhere: /usr/bin/Rscript validation/datasets/extract.R
# Sources: R package `datasets` (Debian r-base-core), `tseries` (r-cran-tseries), `forecast` (r-cran-forecast).
# See PROVENANCE.md for versions, original sources as stated on the help pages, licences and checksums.
suppressPackageStartupMessages({
  library(tseries)
  library(forecast)
})

args <- commandArgs(trailingOnly = FALSE)
script <- sub("^--file=", "", args[grep("^--file=", args)])
out_dir <- if (length(script) == 1) dirname(normalizePath(script)) else "."

write_csv <- function(frame, name) {
  path <- file.path(out_dir, name)
  # 17 significant digits would only show binary noise: every series here is stored in R with few decimals.
  write.csv(frame, path, row.names = FALSE, quote = FALSE)
  cat("wrote", path, nrow(frame), "rows\n")
}

# Nile: annual flow at Aswan, 1871-1970, 10^8 m^3 (datasets::Nile).
write_csv(data.frame(year = as.integer(time(Nile)), flow = as.numeric(Nile)), "nile.csv")

# AirPassengers: monthly totals, thousands, 1949-01 .. 1960-12 (datasets::AirPassengers).
ap_time <- time(AirPassengers)
write_csv(data.frame(month = sprintf("%04d-%02d", as.integer(floor(ap_time + 1e-6)),
                                     as.integer(round((ap_time - floor(ap_time + 1e-6)) * 12)) + 1L),
                     passengers = as.numeric(AirPassengers)), "air_passengers.csv")

# co2: Mauna Loa monthly CO2, ppm, 1959-01 .. 1997-12 (datasets::co2).
co2_time <- time(co2)
write_csv(data.frame(month = sprintf("%04d-%02d", as.integer(floor(co2_time + 1e-6)),
                                     as.integer(round((co2_time - floor(co2_time + 1e-6)) * 12)) + 1L),
                     co2_ppm = as.numeric(co2)), "co2.csv")

# ice.river: daily, four variables; the help page gives Jan 1, 1972 as the first day.
data(ice.river)
days <- seq(as.Date("1972-01-01"), by = "day", length.out = nrow(ice.river))
write_csv(data.frame(date = format(days, "%Y-%m-%d"),
                     flow_vat = as.numeric(ice.river[, "flow.vat"]),
                     flow_jok = as.numeric(ice.river[, "flow.jok"]),
                     prec = as.numeric(ice.river[, "prec"]),
                     temp = as.numeric(ice.river[, "temp"])), "ice_river.csv")

# taylor: half-hourly demand, MW, from Monday 5 June 2000; first value stamped 2000-06-05T00:00:00Z (see PROVENANCE.md).
start <- as.POSIXct("2000-06-05 00:00:00", tz = "UTC")
stamps <- start + (seq_along(taylor) - 1) * 1800
write_csv(data.frame(time = format(stamps, "%Y-%m-%dT%H:%M:%SZ", tz = "UTC"),
                     demand_mw = as.numeric(taylor)), "taylor.csv")
