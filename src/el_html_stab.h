/* el_html_stab: the assess page's figure of the poles across model orders
 * (the subspace stage's stabilisation, hankel only), drawn with el_svg. */
#ifndef EL_HTML_STAB_H
#define EL_HTML_STAB_H

#include "el_svg.h"

/* 1 when the assessment behind c (c->r, must be set) has poles across
 * orders to draw: a hankel model with a non-empty pole list. */
int el_html_stab_present(const el_html_ctx *c);

/* Appends <figure id="fig-orders"> to the page when el_html_stab_present
 * (else nothing): model order on the x axis (1 .. the largest order
 * fitted), damped frequency on the y axis (0 .. 1.5 times the highest
 * persistent pole, at most the Nyquist frequency; poles above, or without
 * a frequency, are counted in the caption, not drawn). Every pole is one
 * <circle class="pole KIND"> (KIND: "in-model", "persistent" or
 * "spurious") with data-order and a <title> giving its order, frequency,
 * damping ratio and contribution; poles of one chain of persistent poles
 * are joined by a <path class="chain"> (class "chain in-model" for a chain
 * the model kept); the model's order is a band of class "chosen-order";
 * each kept pole at that order is labelled with the number of the
 * reported mode nearest in frequency. Escaped text, "n/a" for values
 * that do not exist, the same bytes for the same input. Output errors
 * are recorded in c->o (failed). */
void el_html_stab_figure(el_html_ctx *c);

#endif
