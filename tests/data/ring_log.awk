# ring_log.awk: a ring of nc coupled, damped channels driven by unit
# Gaussian noise (x[c] <- 0.9 x[c] + 0.05 x[c-1] + e, Box-Muller), with
# uniform sensor noise of width 0.3 on every sample; n rows at dt = 0.01 s.
# awk's generator with a fixed seed: the same file on every run.
# usage: awk -v nc=CHANNELS -v n=ROWS -f tests/data/ring_log.awk > log.csv
# (tests/e2e_wide_report.sh and bench/bench_track.sh's wide log)
BEGIN {
    srand(7); dt = 0.01
    printf "t [s]"; for (c = 0; c < nc; c++) printf ",s%03d", c; printf "\n"
    for (k = 0; k < n; k++) {
        printf "%.2f", k * dt
        for (c = 0; c < nc; c++) {
            u1 = rand(); u2 = rand(); if (u1 < 1e-12) u1 = 1e-12
            e = sqrt(-2 * log(u1)) * cos(6.283185307179586 * u2)
            y[c] = 0.9 * x[c] + 0.05 * x[(c + nc - 1) % nc] + e
        }
        for (c = 0; c < nc; c++) { x[c] = y[c]; printf ",%.5f", x[c] + 0.3 * (rand() - 0.5) }
        printf "\n"
    }
}
