/*
 * Every entry point with NULL pointers and bad lengths: each must return the
 * documented status and write nothing. tests/c/check_null_coverage.sh fails
 * when a pf_ function of the header does not appear in this file.
 */
#include "plumbfit.h"

#include <stdint.h>
#include <stdio.h>
#include <string.h>

static int failures = 0;

#define EXPECT(call, want)                                                   \
    do {                                                                     \
        pf_status got_ = (call);                                             \
        if (got_ != (pf_status)(want)) {                                     \
            fprintf(stderr, "%s:%d: %s returned %u (%s), expected %u\n",     \
                    __FILE__, __LINE__, #call, (unsigned)got_,               \
                    pf_status_str(got_), (unsigned)(want));                  \
            failures++;                                                      \
        }                                                                    \
    } while (0)

#define CHECK(cond)                                                          \
    do {                                                                     \
        if (!(cond)) {                                                       \
            fprintf(stderr, "%s:%d: check failed: %s\n", __FILE__, __LINE__, \
                    #cond);                                                  \
            failures++;                                                      \
        }                                                                    \
    } while (0)

#define NP PF_ERR_NULL_POINTER

int main(void) {
    pf_line *l = NULL, *untouched = NULL;
    pf_layout lay;
    pf_moments m;
    pf_fitted_line fit;
    pf_interval iv;
    pf_anova an;
    uint64_t n = 7;
    uint32_t t = 7;
    double d = 7.0, e = 7.0;
    double xs[4] = {1.0, 2.0, 3.0, 4.0};
    double ys[4] = {1.0, 2.1, 2.9, 4.2};
    double ws[4] = {1.0, 1.0, 1.0, 1.0};
    uint64_t raw[PF_LINE_FULL_STORAGE_WORDS + 1];
    const double *misaligned = (const double *)(const void *)((const char *)(const void *)xs + 1);

    /* No pointer arguments; the returned strings are never NULL. */
    CHECK(pf_version() != NULL);
    CHECK(pf_abi_version() == PF_ABI_VERSION);
    CHECK(pf_version_number() == PF_VERSION_NUMBER);
    CHECK(pf_status_str(0xFFFFFFFFu) != NULL);

    EXPECT(pf_line_layout(PF_TIER_LEAN, NULL), NP);

    EXPECT(pf_line_init_in(NULL, sizeof raw, PF_TIER_LEAN, &untouched), NP);
    EXPECT(pf_line_init_in(NULL, 0, PF_TIER_LEAN, &untouched), NP);
    EXPECT(pf_line_init_in(raw, sizeof raw, PF_TIER_LEAN, NULL), NP);
    EXPECT(pf_line_init_in(raw, 0, PF_TIER_LEAN, &untouched), PF_ERR_BUFFER_TOO_SMALL);
    EXPECT(pf_line_init_in(raw, 1, PF_TIER_FULL, &untouched), PF_ERR_BUFFER_TOO_SMALL);
    EXPECT(pf_line_init_in((char *)(void *)raw + 1, sizeof raw - 1, PF_TIER_LEAN, &untouched),
           PF_ERR_MISALIGNED);
    EXPECT(pf_line_init_in(raw, sizeof raw, 2u, &untouched), PF_ERR_BAD_ARGUMENT);
    CHECK(untouched == NULL);

    EXPECT(pf_line_new(PF_TIER_LEAN, NULL), NP);
    EXPECT(pf_line_new(99u, &untouched), PF_ERR_BAD_ARGUMENT);
    CHECK(untouched == NULL);
    EXPECT(pf_line_free(NULL), PF_OK);

    EXPECT(pf_line_new(PF_TIER_FULL, &l), PF_OK);

    EXPECT(pf_line_reset(NULL), NP);
    EXPECT(pf_line_tier(NULL, &t), NP);
    EXPECT(pf_line_tier(l, NULL), NP);
    EXPECT(pf_line_push(NULL, 1.0, 2.0), NP);
    EXPECT(pf_line_push_weighted(NULL, 1.0, 2.0, 1.0), NP);

    EXPECT(pf_line_extend(NULL, xs, ys, 4), NP);
    EXPECT(pf_line_extend(l, NULL, ys, 4), NP);
    EXPECT(pf_line_extend(l, xs, NULL, 4), NP);
    EXPECT(pf_line_extend(l, NULL, NULL, 0), NP);
    EXPECT(pf_line_extend(l, xs, NULL, 0), NP);
    EXPECT(pf_line_extend(l, xs, ys, 0), PF_ERR_EMPTY_INPUT);
    EXPECT(pf_line_extend(l, xs, ys, SIZE_MAX), PF_ERR_BAD_ARGUMENT);
    EXPECT(pf_line_extend(l, misaligned, ys, 2), PF_ERR_MISALIGNED);

    EXPECT(pf_line_extend_weighted(NULL, xs, ys, ws, 4), NP);
    EXPECT(pf_line_extend_weighted(l, NULL, ys, ws, 4), NP);
    EXPECT(pf_line_extend_weighted(l, xs, NULL, ws, 4), NP);
    EXPECT(pf_line_extend_weighted(l, xs, ys, NULL, 4), NP);
    EXPECT(pf_line_extend_weighted(l, xs, ys, NULL, 0), NP);
    EXPECT(pf_line_extend_weighted(l, xs, ys, ws, 0), PF_ERR_EMPTY_INPUT);
    EXPECT(pf_line_extend_weighted(l, xs, ys, ws, SIZE_MAX / 2), PF_ERR_BAD_ARGUMENT);
    EXPECT(pf_line_extend_weighted(l, xs, ys, misaligned, 2), PF_ERR_MISALIGNED);

    EXPECT(pf_line_merge(NULL, l), NP);
    EXPECT(pf_line_merge(l, NULL), NP);
    EXPECT(pf_line_forget(NULL, 0.5), NP);
    EXPECT(pf_line_count(NULL, &n), NP);
    EXPECT(pf_line_count(l, NULL), NP);
    EXPECT(pf_line_moments(NULL, &m), NP);
    EXPECT(pf_line_moments(l, NULL), NP);
    EXPECT(pf_line_x_range(NULL, &d, &e), NP);
    EXPECT(pf_line_x_range(l, NULL, &e), NP);
    EXPECT(pf_line_x_range(l, &d, NULL), NP);
    EXPECT(pf_line_y_range(NULL, &d, &e), NP);
    EXPECT(pf_line_y_range(l, NULL, &e), NP);
    EXPECT(pf_line_y_range(l, &d, NULL), NP);
    EXPECT(pf_line_slope_intercept(NULL, &d, &e), NP);
    EXPECT(pf_line_slope_intercept(l, NULL, &e), NP);
    EXPECT(pf_line_slope_intercept(l, &d, NULL), NP);
    EXPECT(pf_line_fit(NULL, 0, &fit), NP);
    EXPECT(pf_line_fit(l, 0, NULL), NP);

    /* Nothing above added a pair or wrote an output. */
    EXPECT(pf_line_count(l, &n), PF_OK);
    CHECK(n == 0);
    CHECK(t == 7 && d == 7.0 && e == 7.0);

    EXPECT(pf_line_extend(l, xs, ys, 4), PF_OK);
    EXPECT(pf_line_fit(l, 0, &fit), PF_OK);

    EXPECT(pf_fitted_line_value(NULL, 1.0, &d), NP);
    EXPECT(pf_fitted_line_value(&fit, 1.0, NULL), NP);
    EXPECT(pf_fitted_line_mean_band(NULL, 1.0, 0.95, &iv), NP);
    EXPECT(pf_fitted_line_mean_band(&fit, 1.0, 0.95, NULL), NP);
    EXPECT(pf_fitted_line_prediction(NULL, 1.0, 1, 0.95, &iv), NP);
    EXPECT(pf_fitted_line_prediction(&fit, 1.0, 1, 0.95, NULL), NP);
    EXPECT(pf_fitted_line_slope_interval(NULL, 0.95, &iv), NP);
    EXPECT(pf_fitted_line_slope_interval(&fit, 0.95, NULL), NP);
    EXPECT(pf_fitted_line_intercept_interval(NULL, 0.95, &iv), NP);
    EXPECT(pf_fitted_line_intercept_interval(&fit, 0.95, NULL), NP);
    EXPECT(pf_fitted_line_critical_value(NULL, 0.95, &d), NP);
    EXPECT(pf_fitted_line_critical_value(&fit, 0.95, NULL), NP);
    EXPECT(pf_fitted_line_anova(NULL, &an), NP);
    EXPECT(pf_fitted_line_anova(&fit, NULL), NP);
    EXPECT(pf_fitted_line_chi_square_p(NULL, &d), NP);
    EXPECT(pf_fitted_line_chi_square_p(&fit, NULL), NP);
    CHECK(d == 7.0);

    EXPECT(pf_line_free(l), PF_OK);
    (void)lay;
    if (failures) {
        fprintf(stderr, "test_null: %d failure(s)\n", failures);
        return 1;
    }
    printf("test_null: all checks passed\n");
    return 0;
}
