/*
 * Firmware-style use of plumbfit: static storage only, no malloc.
 *
 * A load-cell front end is calibrated against reference masses: each
 * calibration step reads the raw ADC count while a known mass sits on the
 * cell. The accumulator lives in a static buffer; readings are pushed one
 * at a time as they arrive. The calibration line gives counts as a function
 * of mass; a new raw reading is turned around into a calibrated mass with
 * its exact (Fieller) 95 % interval, and the detection limit is stated.
 *
 * ALL DATA BELOW ARE INVENTED for illustration; they describe no real
 * device. Whether a calibration is accepted is decided by your quality
 * system, not by this library.
 */
#include "plumbfit.h"

#include <stdio.h>

/* Invented calibration readings: reference mass (g) and raw ADC counts. */
static const double ref_mass_g[] = {0.0,    0.0,    200.0,  200.0,  500.0, 500.0,
                                    1000.0, 1000.0, 2000.0, 2000.0, 5000.0, 5000.0};
static const double raw_counts[] = {8203.0,  8198.0,  48611.0,  48597.0,  109204.0, 109221.0,
                                    210188.0, 210201.0, 412415.0, 412377.0, 1018590.0, 1018633.0};
#define N_READINGS (sizeof ref_mass_g / sizeof ref_mass_g[0])

/* The accumulator's memory: static, sized by the header. */
static pf_line_lean_storage cal_storage;
/* Stand-in for non-volatile memory that survives a power cycle. */
static uint8_t nv_image[PF_STATE_LINE_LEAN_LEN];

static int report(const char *what, pf_status s) {
    if (s == PF_OK) return 0;
    switch (s) {
    case PF_ERR_NON_FINITE:
        fprintf(stderr, "%s: reading is not a number; skipped\n", what);
        return 0; /* the accumulator is unchanged: keep going */
    default:
        fprintf(stderr, "%s failed: %s (%u)\n", what, pf_status_str(s), (unsigned)s);
        return 1;
    }
}

int main(void) {
    pf_line *cal = NULL;
    pf_fitted_line line;
    pf_inverse mass;
    pf_decision_limits lim;
    unsigned i;
    const double new_raw = 305120.0; /* invented reading to convert */

    if (pf_abi_version() != PF_ABI_VERSION) {
        fprintf(stderr, "plumbfit ABI %u, header %u\n", (unsigned)pf_abi_version(),
                (unsigned)PF_ABI_VERSION);
        return 1;
    }
    if (report("init", pf_line_init_in(&cal_storage, sizeof cal_storage, PF_TIER_LEAN, &cal)))
        return 1;

    /* The acquisition loop: one pair per calibration step. */
    for (i = 0; i < N_READINGS; i++) {
        if (report("push", pf_line_push(cal, ref_mass_g[i], raw_counts[i]))) return 1;
    }

    /* Persist the accumulator, then (as after a power cycle) rebuild it in
     * the same static storage from the saved bytes. */
    {
        size_t written = 0;
        if (report("save", pf_line_save(cal, nv_image, sizeof nv_image, &written))) return 1;
        if (report("init", pf_line_init_in(&cal_storage, sizeof cal_storage, PF_TIER_LEAN, &cal)))
            return 1;
        if (report("restore", pf_line_restore(cal, nv_image, written))) return 1;
        printf("state saved and restored: %lu bytes\n", (unsigned long)written);
    }

    if (report("fit", pf_line_fit(cal, 0, &line))) return 1;
    printf("calibration: counts = %.2f + %.4f * mass_g  (n = %llu, residual sd %.1f counts)\n",
           line.intercept, line.slope, (unsigned long long)line.count, line.resid_sd);
    printf("slope standard error %.3g counts/g, R^2 %.8f\n", line.slope_se, line.r_squared);

    /* One new reading (replicates 1, unit weight), 95 % level. */
    if (report("invert", pf_fitted_line_invert(&line, new_raw, 1, 1.0, 0.95, &mass))) return 1;
    if (mass.set_kind == PF_SET_BOUNDED) {
        printf("raw %.0f counts -> %.2f g, 95%% interval [%.2f, %.2f] g\n", new_raw, mass.x,
               mass.set_lower, mass.set_upper);
    } else {
        printf("raw %.0f counts -> %.2f g, slope not significant: interval unbounded\n",
               new_raw, mass.x);
    }
    if (report("limits", pf_fitted_line_decision_limits(&line, 0.05, 0.05, 1, 1.0, &lim)))
        return 1;
    printf("decision limit %.2f g, detection limit %.2f g (alpha = beta = 0.05)\n",
           lim.x_critical, lim.x_detection);
    /* No free: the handle lives in cal_storage. */
    return 0;
}
