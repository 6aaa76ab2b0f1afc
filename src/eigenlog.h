/* eigenlog.h: the one public header of libeigenlog. A program that uses the
 * library includes this and links with `pkg-config --libs eigenlog`
 * (static: `pkg-config --static --libs eigenlog`).
 *
 * The library is the command line's own pipeline, stage by stage; each
 * stage header below carries the contract of its functions. The usual
 * entry points:
 *   el_assess_defaults / el_assess_run / el_assessment_free   (assess)
 *   el_report_text / el_report_json                           (its reports)
 *   el_track_defaults / el_track_run / el_track_free          (track)
 *   el_spectrum_compute                                       (spectrum)
 *   el_demo_generate                                          (demo logs)
 * Every call returns an el_status and fills an el_error (message, file,
 * line, column, option, hint); nothing prints and nothing exits. Results
 * are owned by the caller and freed with the matching *_free.
 *
 * Threads: the bootstrap runs its own worker threads, so call
 * openblas_set_num_threads(1) (cblas.h) once at start, as the program does.
 * FFTW planning is not thread-safe: run assess/track/spectrum calls that
 * plan from one thread at a time.
 *
 * Installed as PREFIX/include/eigenlog.h, the stage headers in
 * PREFIX/include/eigenlog/ (`make install` rewrites the includes below to
 * "eigenlog/el_....h"). In the source tree it is src/eigenlog.h. */
#ifndef EIGENLOG_H
#define EIGENLOG_H

#include "el_error.h"
#include "el_io.h"
#include "el_ingest.h"
#include "el_timebase.h"
#include "el_prep.h"
#include "el_fit.h"
#include "el_estimator.h"
#include "el_modes.h"
#include "el_verdict.h"
#include "el_spectrum.h"
#include "el_assess.h"
#include "el_advice.h"
#include "el_report.h"
#include "el_track.h"
#include "el_demo.h"

#endif
