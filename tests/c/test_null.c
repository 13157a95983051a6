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

    /* ---- calibration ---- */
    {
        pf_inverse inv;
        pf_limits lim;
        pf_decision_limits dlim;
        pf_quadratic_check qc;
        pf_lack_of_fit lof;
        pf_levels *lv = NULL, *lu = NULL;
        uint64_t lraw[PF_LEVELS_STORAGE_WORDS];
        size_t nl = 7;

        EXPECT(pf_fitted_line_invert(NULL, 2.0, 1, 1.0, 0.95, &inv), NP);
        EXPECT(pf_fitted_line_invert(&fit, 2.0, 1, 1.0, 0.95, NULL), NP);
        EXPECT(pf_fitted_line_invert(&fit, 2.0, 0, 1.0, 0.95, &inv), PF_ERR_INVALID_COUNT);
        EXPECT(pf_fitted_line_calibrated_value(NULL, 2.0, 0.1, &d, &e), NP);
        EXPECT(pf_fitted_line_calibrated_value(&fit, 2.0, 0.1, NULL, &e), NP);
        EXPECT(pf_fitted_line_calibrated_value(&fit, 2.0, 0.1, &d, NULL), NP);
        EXPECT(pf_fitted_line_calibrated_value(&fit, 2.0, -0.1, &d, &e), PF_ERR_INVALID_UNCERTAINTY);
        EXPECT(pf_fitted_line_limits(NULL, PF_SIGMA_RESIDUAL_SD, 0.0, &lim), NP);
        EXPECT(pf_fitted_line_limits(&fit, PF_SIGMA_RESIDUAL_SD, 0.0, NULL), NP);
        EXPECT(pf_fitted_line_limits(NULL, 9u, 0.0, &lim), NP);
        EXPECT(pf_fitted_line_limits(&fit, 9u, 0.0, &lim), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_fitted_line_decision_limits(NULL, 0.05, 0.05, 1, 1.0, &dlim), NP);
        EXPECT(pf_fitted_line_decision_limits(&fit, 0.05, 0.05, 1, 1.0, NULL), NP);
        EXPECT(pf_fitted_line_decision_limits(&fit, 0.5, 0.05, 1, 1.0, &dlim), PF_ERR_INVALID_LEVEL);
        EXPECT(pf_line_quadratic_check(NULL, &qc), NP);
        EXPECT(pf_line_quadratic_check(l, NULL), NP);

        EXPECT(pf_levels_layout(NULL), NP);
        EXPECT(pf_levels_init_in(NULL, sizeof lraw, &lu), NP);
        EXPECT(pf_levels_init_in(NULL, 0, &lu), NP);
        EXPECT(pf_levels_init_in(lraw, sizeof lraw, NULL), NP);
        EXPECT(pf_levels_init_in(lraw, 0, &lu), PF_ERR_BUFFER_TOO_SMALL);
        EXPECT(pf_levels_init_in((char *)(void *)lraw + 2, sizeof lraw - 2, &lu), PF_ERR_MISALIGNED);
        EXPECT(pf_levels_new(NULL), NP);
        CHECK(lu == NULL);
        EXPECT(pf_levels_free(NULL), PF_OK);
        EXPECT(pf_levels_free((pf_levels *)(void *)l), PF_ERR_BAD_HANDLE);
        EXPECT(pf_levels_new(&lv), PF_OK);
        EXPECT(pf_levels_push(NULL, 1.0, 1.0), NP);
        EXPECT(pf_levels_push_weighted(NULL, 1.0, 1.0, 1.0), NP);
        EXPECT(pf_levels_push_weighted(lv, 1.0, 1.0, 0.0), PF_ERR_INVALID_WEIGHT);
        EXPECT(pf_levels_extend(NULL, xs, ys, 4), NP);
        EXPECT(pf_levels_extend(lv, NULL, ys, 4), NP);
        EXPECT(pf_levels_extend(lv, xs, NULL, 4), NP);
        EXPECT(pf_levels_extend(lv, NULL, NULL, 0), NP);
        EXPECT(pf_levels_extend(lv, xs, ys, SIZE_MAX), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_levels_extend(lv, misaligned, ys, 1), PF_ERR_MISALIGNED);
        EXPECT(pf_levels_merge(NULL, lv), NP);
        EXPECT(pf_levels_merge(lv, NULL), NP);
        EXPECT(pf_levels_count(NULL, &n, &nl), NP);
        EXPECT(pf_levels_count(lv, NULL, &nl), NP);
        EXPECT(pf_levels_count(lv, &n, NULL), NP);
        EXPECT(pf_levels_lack_of_fit(NULL, &fit, &lof), NP);
        EXPECT(pf_levels_lack_of_fit(lv, NULL, &lof), NP);
        EXPECT(pf_levels_lack_of_fit(lv, &fit, NULL), NP);
        EXPECT(pf_levels_count(lv, &n, &nl), PF_OK);
        CHECK(n == 0 && nl == 0);
        EXPECT(pf_levels_free(lv), PF_OK);
        (void)lu;
    }

    /* ---- diagnostics ---- */
    {
        pf_stream_checks sc;
        pf_point_influence pi[4];
        pf_normality nt;
        double rr[4];
        EXPECT(pf_line_stream_checks(NULL, &sc), NP);
        EXPECT(pf_line_stream_checks(l, NULL), NP);
        EXPECT(pf_fitted_line_residuals(NULL, xs, ys, 4, rr, 4), NP);
        EXPECT(pf_fitted_line_residuals(&fit, NULL, ys, 4, rr, 4), NP);
        EXPECT(pf_fitted_line_residuals(&fit, xs, NULL, 4, rr, 4), NP);
        EXPECT(pf_fitted_line_residuals(&fit, xs, ys, 4, NULL, 4), NP);
        EXPECT(pf_fitted_line_residuals(&fit, NULL, NULL, 0, rr, 0), NP);
        EXPECT(pf_fitted_line_residuals(&fit, xs, ys, 4, rr, 3), PF_ERR_DIAG_OUTPUT_TOO_SHORT);
        EXPECT(pf_fitted_line_residuals(&fit, xs, ys, 0, rr, 4), PF_ERR_EMPTY_INPUT);
        EXPECT(pf_fitted_line_residuals(&fit, xs, ys, SIZE_MAX, rr, 4), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_fitted_line_influence(NULL, xs, ys, 4, pi, 4), NP);
        EXPECT(pf_fitted_line_influence(&fit, NULL, ys, 4, pi, 4), NP);
        EXPECT(pf_fitted_line_influence(&fit, xs, NULL, 4, pi, 4), NP);
        EXPECT(pf_fitted_line_influence(&fit, xs, ys, 4, NULL, 4), NP);
        EXPECT(pf_fitted_line_influence(&fit, xs, ys, 4, pi, 3), PF_ERR_DIAG_OUTPUT_TOO_SHORT);
        EXPECT(pf_shapiro_wilk(NULL, 4, &nt), NP);
        EXPECT(pf_shapiro_wilk(NULL, 0, &nt), NP);
        EXPECT(pf_shapiro_wilk(xs, 4, NULL), NP);
        EXPECT(pf_shapiro_wilk(xs, SIZE_MAX, &nt), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_anderson_darling(NULL, 4, &nt), NP);
        EXPECT(pf_anderson_darling(xs, 4, NULL), NP);
        EXPECT(pf_anderson_darling(misaligned, 2, &nt), PF_ERR_MISALIGNED);
    }

    /* ---- saved state ---- */
    {
        static uint8_t sb[PF_STATE_MAX_LEN];
        pf_model *sm = NULL;
        pf_levels *slv = NULL;
        pf_state_info si;
        size_t sl = 7, sw = 7;
        EXPECT(pf_model_new(2, &sm), PF_OK);
        EXPECT(pf_line_state_len(NULL, &sl), NP);
        EXPECT(pf_line_state_len(l, NULL), NP);
        EXPECT(pf_line_save(NULL, sb, sizeof sb, &sw), NP);
        EXPECT(pf_line_save(l, NULL, sizeof sb, &sw), NP);
        EXPECT(pf_line_save(l, NULL, 0, &sw), NP);
        EXPECT(pf_line_save(l, sb, sizeof sb, NULL), NP);
        EXPECT(pf_line_save(l, sb, 0, &sw), PF_ERR_STATE_BUFFER_TOO_SMALL);
        EXPECT(pf_line_restore(NULL, sb, sizeof sb), NP);
        EXPECT(pf_line_restore(l, NULL, sizeof sb), NP);
        EXPECT(pf_line_restore(l, NULL, 0), NP);
        EXPECT(pf_line_restore(l, sb, 0), PF_ERR_STATE_TRUNCATED);
        EXPECT(pf_line_restore(l, sb, SIZE_MAX), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_model_state_len(NULL, &sl), NP);
        EXPECT(pf_model_state_len(sm, NULL), NP);
        EXPECT(pf_model_save(NULL, sb, sizeof sb, &sw), NP);
        EXPECT(pf_model_save(sm, NULL, sizeof sb, &sw), NP);
        EXPECT(pf_model_save(sm, sb, sizeof sb, NULL), NP);
        EXPECT(pf_model_save(sm, sb, 1, &sw), PF_ERR_STATE_BUFFER_TOO_SMALL);
        EXPECT(pf_model_restore(NULL, sb, sizeof sb), NP);
        EXPECT(pf_model_restore(sm, NULL, sizeof sb), NP);
        EXPECT(pf_model_restore(sm, NULL, 0), NP);
        EXPECT(pf_model_restore(sm, sb, 3), PF_ERR_STATE_TRUNCATED);
        EXPECT(pf_state_peek(NULL, sizeof sb, &si), NP);
        EXPECT(pf_state_peek(NULL, 0, &si), NP);
        EXPECT(pf_state_peek(sb, sizeof sb, NULL), NP);
        EXPECT(pf_state_peek(sb, 0, &si), PF_ERR_STATE_TRUNCATED);
        EXPECT(pf_state_declared_len(NULL, PF_STATE_HEADER_LEN, &sl), NP);
        EXPECT(pf_state_declared_len(sb, PF_STATE_HEADER_LEN, NULL), NP);
        EXPECT(pf_state_declared_len(sb, PF_STATE_HEADER_LEN - 1, &sl), PF_ERR_STATE_TRUNCATED);
        EXPECT(pf_levels_new(&slv), PF_OK);
        EXPECT(pf_levels_state_len(NULL, &sl), NP);
        EXPECT(pf_levels_state_len(slv, NULL), NP);
        EXPECT(pf_levels_state_len((const pf_levels *)(const void *)sm, &sl), PF_ERR_BAD_HANDLE);
        EXPECT(pf_levels_save(NULL, sb, sizeof sb, &sw), NP);
        EXPECT(pf_levels_save(slv, NULL, sizeof sb, &sw), NP);
        EXPECT(pf_levels_save(slv, NULL, 0, &sw), NP);
        EXPECT(pf_levels_save(slv, sb, sizeof sb, NULL), NP);
        EXPECT(pf_levels_save(slv, sb, PF_STATE_LEVELS_BASE_LEN - 1, &sw),
               PF_ERR_STATE_BUFFER_TOO_SMALL);
        EXPECT(pf_levels_restore(NULL, sb, sizeof sb), NP);
        EXPECT(pf_levels_restore(slv, NULL, sizeof sb), NP);
        EXPECT(pf_levels_restore(slv, NULL, 0), NP);
        EXPECT(pf_levels_restore(slv, sb, 0), PF_ERR_STATE_TRUNCATED);
        EXPECT(pf_levels_restore(slv, sb, SIZE_MAX), PF_ERR_BAD_ARGUMENT);
        CHECK(sl == 7 && sw == 7);
        EXPECT(pf_levels_free(slv), PF_OK);
        EXPECT(pf_model_free(sm), PF_OK);
    }

    /* ---- model accumulator ---- */
    {
        pf_model *mm = NULL, *mu = NULL;
        pf_model_info info;
        size_t pp = 7;
        double row[2] = {1.0, 2.0};
        double rows[8] = {1.0, 1.0, 1.0, 2.0, 1.0, 3.0, 1.0, 4.0};
        double coef[2] = {7.0, 7.0}, se[2] = {7.0, 7.0}, cov[4];
        pf_interval ivs[2];
        uint64_t mraw[64];

        EXPECT(pf_model_layout(2, NULL), NP);
        EXPECT(pf_model_layout(0, &lay), PF_ERR_MODEL_PARAM_COUNT);
        EXPECT(pf_model_layout(PF_MODEL_MAX_PARAMS + 1, &lay), PF_ERR_MODEL_PARAM_COUNT);
        EXPECT(pf_model_init_in(NULL, sizeof mraw, 2, &mu), NP);
        EXPECT(pf_model_init_in(NULL, 0, 2, &mu), NP);
        EXPECT(pf_model_init_in(mraw, sizeof mraw, 2, NULL), NP);
        EXPECT(pf_model_init_in(mraw, 0, 2, &mu), PF_ERR_BUFFER_TOO_SMALL);
        EXPECT(pf_model_init_in(mraw, sizeof mraw, 16, &mu), PF_ERR_BUFFER_TOO_SMALL);
        EXPECT(pf_model_init_in((char *)(void *)mraw + 4, sizeof mraw - 4, 2, &mu),
               PF_ERR_MISALIGNED);
        EXPECT(pf_model_init_in(mraw, sizeof mraw, 0, &mu), PF_ERR_MODEL_PARAM_COUNT);
        EXPECT(pf_model_new(2, NULL), NP);
        EXPECT(pf_model_new(17, &mu), PF_ERR_MODEL_PARAM_COUNT);
        CHECK(mu == NULL);
        EXPECT(pf_model_free(NULL), PF_OK);
        EXPECT(pf_model_free((pf_model *)(void *)l), PF_ERR_BAD_HANDLE);

        EXPECT(pf_model_new(2, &mm), PF_OK);
        EXPECT(pf_model_reset(NULL), NP);
        EXPECT(pf_model_params(NULL, &pp), NP);
        EXPECT(pf_model_params(mm, NULL), NP);
        EXPECT(pf_model_count(NULL, &n), NP);
        EXPECT(pf_model_count(mm, NULL), NP);
        EXPECT(pf_model_push(NULL, row, 2, 1.0), NP);
        EXPECT(pf_model_push(mm, NULL, 2, 1.0), NP);
        EXPECT(pf_model_push(mm, NULL, 0, 1.0), NP);
        EXPECT(pf_model_push(mm, row, 1, 1.0), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_push(mm, row, 0, 1.0), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_push(mm, row, SIZE_MAX, 1.0), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_model_push(mm, misaligned, 2, 1.0), PF_ERR_MISALIGNED);
        EXPECT(pf_model_push_weighted(NULL, row, 2, 1.0, 1.0), NP);
        EXPECT(pf_model_push_weighted(mm, NULL, 2, 1.0, 1.0), NP);
        EXPECT(pf_model_push_weighted(mm, row, 3, 1.0, 1.0), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_push_powers(NULL, 1.0, 1.0, 1.0), NP);
        EXPECT(pf_model_extend(NULL, rows, 8, ys, 4), NP);
        EXPECT(pf_model_extend(mm, NULL, 8, ys, 4), NP);
        EXPECT(pf_model_extend(mm, rows, 8, NULL, 4), NP);
        EXPECT(pf_model_extend(mm, NULL, 0, NULL, 0), NP);
        EXPECT(pf_model_extend(mm, rows, 0, ys, 0), PF_ERR_EMPTY_INPUT);
        EXPECT(pf_model_extend_weighted(mm, rows, 0, ys, ws, 0), PF_ERR_EMPTY_INPUT);
        EXPECT(pf_model_extend(mm, rows, 7, ys, 4), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_extend(mm, rows, SIZE_MAX, ys, 4), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_model_extend_weighted(NULL, rows, 8, ys, ws, 4), NP);
        EXPECT(pf_model_extend_weighted(mm, NULL, 8, ys, ws, 4), NP);
        EXPECT(pf_model_extend_weighted(mm, rows, 8, NULL, ws, 4), NP);
        EXPECT(pf_model_extend_weighted(mm, rows, 8, ys, NULL, 4), NP);
        EXPECT(pf_model_extend_weighted(mm, rows, 8, ys, ws, 3), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_extend_threads(NULL, rows, 8, ys, 4, 2), NP);
        EXPECT(pf_model_extend_threads(mm, NULL, 8, ys, 4, 2), NP);
        EXPECT(pf_model_extend_threads(mm, rows, 8, NULL, 4, 2), NP);
        EXPECT(pf_model_extend_threads(mm, rows, 0, ys, 0, 2), PF_ERR_EMPTY_INPUT);
        EXPECT(pf_model_extend_threads(mm, rows, SIZE_MAX, ys, 4, 2), PF_ERR_BAD_ARGUMENT);
        EXPECT(pf_model_extend_weighted_threads(NULL, rows, 8, ys, ws, 4, 2), NP);
        EXPECT(pf_model_extend_weighted_threads(mm, NULL, 8, ys, ws, 4, 2), NP);
        EXPECT(pf_model_extend_weighted_threads(mm, rows, 8, NULL, ws, 4, 2), NP);
        EXPECT(pf_model_extend_weighted_threads(mm, rows, 8, ys, NULL, 4, 2), NP);
        EXPECT(pf_model_extend_weighted_threads(mm, rows, 8, ys, ws, 3, 0), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_forget(NULL, 0.5), NP);
        EXPECT(pf_model_merge(NULL, mm), NP);
        EXPECT(pf_model_merge(mm, NULL), NP);
        EXPECT(pf_model_fit(NULL, 0, &info, coef, 2, se, 2), NP);
        EXPECT(pf_model_fit(mm, 0, NULL, coef, 2, se, 2), NP);
        EXPECT(pf_model_fit(mm, 0, &info, NULL, 2, se, 2), NP);
        EXPECT(pf_model_fit(mm, 0, &info, coef, 2, NULL, 2), NP);
        EXPECT(pf_model_count(mm, &n), PF_OK);
        CHECK(n == 0);
        EXPECT(pf_model_fit(mm, 0, &info, coef, 2, se, 2), PF_ERR_TOO_FEW_ROWS);
        EXPECT(pf_model_extend(mm, rows, 8, ys, 4), PF_OK);
        EXPECT(pf_model_fit(mm, 0, &info, coef, 1, se, 2), PF_ERR_BUFFER_TOO_SMALL);
        EXPECT(pf_model_fit(mm, 0, &info, coef, 2, se, 0), PF_ERR_BUFFER_TOO_SMALL);
        EXPECT(pf_model_fit(mm, 9u, &info, coef, 2, se, 2), PF_ERR_BAD_ARGUMENT);
        CHECK(coef[0] == 7.0 && se[0] == 7.0);
        EXPECT(pf_model_covariance(NULL, 0, cov, 4), NP);
        EXPECT(pf_model_covariance(mm, 0, NULL, 4), NP);
        EXPECT(pf_model_covariance(mm, 0, cov, 3), PF_ERR_BUFFER_TOO_SMALL);
        EXPECT(pf_model_coef_intervals(NULL, 0, 0.95, ivs, 2), NP);
        EXPECT(pf_model_coef_intervals(mm, 0, 0.95, NULL, 2), NP);
        EXPECT(pf_model_coef_intervals(mm, 0, 0.95, ivs, 1), PF_ERR_BUFFER_TOO_SMALL);
        EXPECT(pf_model_coef_intervals(mm, 0, 1.5, ivs, 2), PF_ERR_MODEL_LEVEL);
        EXPECT(pf_model_predict(NULL, 0, row, 2, &d), NP);
        EXPECT(pf_model_predict(mm, 0, NULL, 2, &d), NP);
        EXPECT(pf_model_predict(mm, 0, row, 2, NULL), NP);
        EXPECT(pf_model_predict(mm, 0, row, 1, &d), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_mean_response(NULL, 0, row, 2, 0.95, &iv), NP);
        EXPECT(pf_model_mean_response(mm, 0, NULL, 2, 0.95, &iv), NP);
        EXPECT(pf_model_mean_response(mm, 0, row, 2, 0.95, NULL), NP);
        EXPECT(pf_model_mean_response(mm, 0, row, 3, 0.95, &iv), PF_ERR_MODEL_DIMENSION);
        EXPECT(pf_model_prediction(NULL, 0, row, 2, 1, 0.95, &iv), NP);
        EXPECT(pf_model_prediction(mm, 0, NULL, 2, 1, 0.95, &iv), NP);
        EXPECT(pf_model_prediction(mm, 0, row, 2, 1, 0.95, NULL), NP);
        EXPECT(pf_model_prediction(mm, 0, row, 2, 0, 0.95, &iv), PF_ERR_MODEL_REPLICATES);
        EXPECT(pf_model_leverage(NULL, 0, row, 2, &d), NP);
        EXPECT(pf_model_leverage(mm, 0, NULL, 2, &d), NP);
        EXPECT(pf_model_leverage(mm, 0, row, 2, NULL), NP);
        CHECK(d == 7.0);
        EXPECT(pf_model_free(mm), PF_OK);
        (void)pp;
    }

    EXPECT(pf_line_free(l), PF_OK);
    (void)lay;
    if (failures) {
        fprintf(stderr, "test_null: %d failure(s)\n", failures);
        return 1;
    }
    printf("test_null: all checks passed\n");
    return 0;
}
