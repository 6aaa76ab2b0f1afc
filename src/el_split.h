/* el_split: the pieces of the split-half drift check that need no fit
 * (docs/method.md, "Drift inside the window"): the halves of a series,
 * which mode of a half is compared, whether a half holds any dynamics,
 * and the z-test. el_assess fits and bootstraps the halves. */
#ifndef EL_SPLIT_H
#define EL_SPLIT_H

#include <stddef.h>

#include "el_boot_bounds.h"
#include "el_error.h"
#include "el_modes.h"
#include "el_timebase.h"

/* The split-half check of the one-operating-point assumption
 * (docs/method.md, "Drift inside the window"): the window is cut into two
 * halves of floor(N / 2) samples (the middle sample of an odd N is left
 * out), each half is fitted with the window's estimator, lags and rank and
 * bootstrapped (EL_ASSESS_SPLIT_REPLICATES replicates, the window's block
 * rule and seed), and one mode of each half is compared: the half's mode
 * nearest (complex plane) the window's least damped mode, or, when the
 * halves decide the window's estimator (hankel) before the window is
 * fitted, the first half's least damped mode and the second half's mode
 * nearest it. z = (half 2 - half 1) / sqrt(sd1^2 + sd2^2 + f^2) for the
 * decay rate and the frequency, sd the standard deviation of the half's
 * matched replicates, f = EL_ASSESS_SPLIT_FLOOR_REL times the larger
 * |lambda| of the two (over 2 pi for the frequency). The dynamics drift
 * when |z| >= EL_ASSESS_SPLIT_Z for either. Without measured inputs, a
 * half whose own data cannot be told from white noise (el_dynamics, its
 * family level) is not compared: the check is not made (white_half,
 * not_tested). */
#define EL_ASSESS_SPLIT_REPLICATES 200
/* Two two-sided tests at a family-wise 1%: 2.807 is the normal quantile
 * 1 - 0.0025 (Bonferroni); the bootstrap spread of half logs is an
 * estimate, so the threshold is rounded up to 3 (calibration in
 * docs/method.md: the steady demo logs give |z| <= 1.4). */
#define EL_ASSESS_SPLIT_Z 3.0
/* Precision of a half's mode beside its bootstrap spread, relative to the
 * mode's |lambda|: each z's standard deviation is at least this times the
 * larger |lambda| of the halves. Noise-free closed-form decays give
 * spreads and differences of 1e-8 to 3e-7 relative (rounding through the
 * fit), which the bootstrap spread alone turned into |z| > 3; a real
 * half log's spread is percents (the calibration below), which 1e-4
 * leaves unchanged. A project convention. */
#define EL_ASSESS_SPLIT_FLOOR_REL 1e-4

/* Modes of each half kept for matching (the least damped first, and the
 * compared one), and the channels of their shapes that enter the match:
 * the first EL_SPLIT_SHAPE_CHANNELS (a subset of channels still tells two
 * modes' shapes apart). */
#define EL_SPLIT_MODES 12
#define EL_SPLIT_SHAPE_CHANNELS 32

/* Modal assurance criterion (Allemang & Brown 1982) at or above which two
 * modes of the halves are taken for the same mode: the compared pair must
 * reach it, else the pair is two different modes of models that missed
 * some (fresh log s010 at 30 and 20 dB: 21.3 Hz in the first half against
 * 9.4 Hz in the second, MAC 0.003, while the first half's 9.0-9.2 Hz mode
 * has MAC 0.994 with the second's). Allemang (2003, Sound and Vibration
 * 37) calls MAC above 0.9 consistent; 0.8 leaves room for the noise of a
 * half log's shapes, and distinct modes of different shapes on several
 * channels stay far below it. Close modes of similar shapes can pass it:
 * the pair is then compared as before. */
#define EL_SPLIT_MAC_SAME 0.8

/* One mode of a half as the check keeps it. */
typedef struct {
    double lambda[2];             /* re, im (>= 0), 1/s */
    double frequency_hz;          /* 0 for a real mode or one at Nyquist */
    double decay_sd, frequency_sd;/* bootstrap standard deviations (as the compared) */
    double shape[EL_SPLIT_SHAPE_CHANNELS][2]; /* scaled shape, re and im */
} el_split_mode_record;

typedef struct {
    int tested;                   /* 1: both halves were fitted and bootstrapped */
    char not_tested[160];         /* why not, when tested == 0 ("" when tested) */
    double split_t;               /* table time where the halves meet */
    double half_t[2][2];          /* [half][start, end] table time */
    double decay_rate[2];         /* the mode compared of each half, 1/s */
    double decay_sd[2];           /* its bootstrap standard deviation */
    double frequency_hz[2];       /* 0 for a real mode */
    double frequency_sd[2];
    double lambda_half[2][2];     /* [half][re, im] of the mode compared, 1/s */
    double z_decay, z_frequency;  /* (half 2 - half 1) / combined sd (NaN: untested) */
    int drift;                    /* 1: |z| >= EL_ASSESS_SPLIT_Z for either */
    int halves_by_iv;             /* 1: the window's estimator (hankel) could not fit
                                     a half, so both were fitted by iv */
    int white_half;               /* 1 or 2: that half cannot be told from white noise
                                     (el_dynamics), so the check was not made; 0 else */
    size_t n_records[2];          /* modes kept of each half (<= EL_SPLIT_MODES) */
    size_t shape_channels;        /* channels of the kept shapes */
    size_t compared[2];           /* index in records of each half's compared mode */
    double mac;                   /* MAC of the compared modes' shapes (NaN: none) */
    int rematched;                /* 1: the nearest mode had another shape, and the
                                     pair compared is a pair of one shape */
    el_split_mode_record records[2][EL_SPLIT_MODES];
} el_split_check;

/* Half h (0: first, 1: second) of s, floor(N / 2) samples, copied into buf
 * (n_channels * floor(N / 2) doubles, column-major like s); names, units
 * and columns are borrowed from s, so *half must never go through
 * el_series_free. Can't fail. */
void el_split_half_series(const el_series *s, size_t h, double *buf, el_series *half);

/* The index of the half's mode to compare: the one nearest ref = {Re, Im
 * >= 0} (1/s) in the complex plane, or 0 (the least damped) when ref holds
 * a NaN or modes is empty. Can't fail. */
size_t el_split_mode(const el_modes *modes, const double ref[2]);

/* Records mode j of half h (0 or 1) in sc: its decay rate, frequency (0
 * for a real mode or one at Nyquist), lambda, and the standard deviations
 * of the decay rate and frequency over boot's replicates matched to mode
 * j (boot->replicates >= 2, boot->n_modes == modes->n_modes). Keeps the
 * half's least damped modes and mode j, with the same figures and their
 * scaled shapes, in sc->records[h] for el_split_decide's match. Can't
 * fail. */
void el_split_take_mode(el_split_check *sc, size_t h, const el_modes *modes, size_t j,
                        const el_boot_result *boot);

/* Tests each half of s (copied through buf, as el_split_half_series) for
 * white noise with el_dynamics_test_series; the first half that cannot be
 * told from it sets sc->white_half (1 or 2) and sc->not_tested. Errors as
 * el_dynamics_test_series (EL_ERR_INTERNAL for NULL arguments). */
el_status el_split_white_half(const el_series *s, double *buf, el_split_check *sc,
                              el_error *err);

/* The z-test of two recorded halves (el_split_take_mode for both): sets
 * tested, z_decay, z_frequency and drift as el_split_check says, on a
 * pair of modes of one shape. With two or more channels, when the
 * compared modes' MAC is below EL_SPLIT_MAC_SAME, the pair compared is
 * the first half's mode with the second half's mode of MAC >=
 * EL_SPLIT_MAC_SAME nearest it (complex plane), else the second half's
 * mode with the first half's so matched; when neither exists the halves
 * share no mode to compare: tested stays 0 and not_tested says so (a mode
 * one half's model missed is no drift). Can't fail. */
void el_split_decide(el_split_check *sc);

#endif
