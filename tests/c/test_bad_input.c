/*
 * Bad-input matrix of the C door. Every entry point that takes data or
 * parameters is called with NaN, +/-infinity, empty input, mismatched
 * lengths, huge magnitudes (1e300, whose squares overflow), zero and
 * negative weights, forgetting factors outside (0, 1], parameter counts
 * outside 1..PF_MODEL_MAX_PARAMS, bad levels and unknown tier / option
 * values. Each call must return its documented status (DEVELOPERS.md
 * table), leave the accumulator bit-for-bit unchanged (its saved bytes and,
 * for caller storage, the storage itself compared with memcmp) and write
 * no output (outputs are pre-filled with a byte pattern that must survive).
 *
 * The data are invented. Every handle case runs on each listed state, once
 * in caller storage and once on a heap handle.
 */
#include "plumbfit.h"

#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

static int failures = 0;
static int cases_run = 0;
static int cases_failed = 0;

#define FAILF(...)                                                           \
    do {                                                                     \
        fprintf(stderr, __VA_ARGS__);                                        \
        failures++;                                                          \
    } while (0)

#define REQUIRE(call)                                                        \
    do {                                                                     \
        pf_status s_ = (call);                                               \
        if (s_ != PF_OK) {                                                   \
            fprintf(stderr, "%s:%d: set-up %s failed: %u (%s)\n", __FILE__,  \
                    __LINE__, #call, (unsigned)s_, pf_status_str(s_));       \
            return 1;                                                        \
        }                                                                    \
    } while (0)

/* ---------------------------------------------------------------------- */
/* Objects under test.                                                     */

enum { K_LEAN = 1, K_FULL = 2, K_MODEL = 4, K_LEVELS = 8 };
enum { S_EMPTY = 1, S_FEW = 2, S_MANY = 4, S_AGED = 8, S_ALL = 15 };
static const char *const state_names[] = {"empty", "few", "many", "aged"};

#define P 3 /* model coefficients used throughout */
#define MODEL_WORDS 512

struct fx {
    pf_line *line;
    pf_model *model;
    pf_levels *lv;
};

/* Caller storage for the object under test, and its copy. */
static union {
    pf_line_lean_storage lean;
    pf_line_full_storage full;
    pf_levels_storage levels;
    uint64_t model[MODEL_WORDS];
} storage, storage_before;
static size_t storage_used;

/* Output sink every case may write to; it must keep its pattern. */
#define SINK_BYTES 4096
static union {
    unsigned char bytes[SINK_BYTES];
    double d[SINK_BYTES / 8];
    pf_fitted_line fit;
    pf_moments moments;
    pf_model_info info;
    pf_interval iv[16];
    pf_quadratic_check quad;
    pf_stream_checks checks;
    pf_lack_of_fit lof;
    pf_layout layout;
    pf_state_info sinfo;
    pf_normality norm;
    pf_inverse inv;
    pf_limits lim;
    pf_decision_limits dec;
    pf_anova anova;
    pf_point_influence infl[64];
    uint64_t u64;
    uint32_t u32;
    size_t sz;
    void *ptr;
} sink;
#define SINK_PATTERN 0xA5

static void sink_fill(void) { memset(sink.bytes, SINK_PATTERN, SINK_BYTES); }
static int sink_intact(void) {
    size_t i;
    for (i = 0; i < SINK_BYTES; i++)
        if (sink.bytes[i] != SINK_PATTERN) return 0;
    return 1;
}

/* Helpers used by several cases. */
static pf_line *other_tier_lean, *other_tier_full; /* for tier mismatch */
static pf_line *far_lean, *far_full;               /* 1e300-away states */
static pf_model *model_p2, *far_model;
static pf_levels *levels_full_store;               /* 32 levels, all used */
static pf_levels *levels_far;                      /* a reading of 1e300 at x = 1 */
static pf_fitted_line good_fit, origin_fit, weighted_fit, forgotten_fit;
static uint8_t lean_bytes[PF_STATE_MAX_LEN], full_bytes[PF_STATE_MAX_LEN];
static uint8_t model_bytes[PF_STATE_MAX_LEN], model2_bytes[PF_STATE_MAX_LEN];
static uint8_t levels_bytes[PF_STATE_MAX_LEN];
static size_t lean_len, full_len, model_len, model2_len, levels_len;
static uint8_t scratch[PF_STATE_MAX_LEN + 8];

/* Invented data: a gently curved line, with replicates at 5 levels. */
static const double XS[10] = {0.0, 0.0, 1.0, 1.0, 2.0, 2.0, 3.0, 3.0, 4.0, 4.0};
static const double YS[10] = {0.11, 0.09, 2.05, 1.98, 4.12, 3.93, 6.02, 6.10, 8.21, 7.95};
static const double ONES[10] = {1, 1, 1, 1, 1, 1, 1, 1, 1, 1};

/* ---------------------------------------------------------------------- */
/* Handle cases. Arrays live in static storage, so each case is one call.  */

static double nan_at2[4], inf_y0[4], huge_alt[20], huge_same[20];
static double deep_nan[700];
static double w_zero1[3], w_neg2[3], w_nan0[3], w_inf1[3];
static double rows_ok[2 * P], rows_nan[2 * P], rows_huge[2 * P], rows_inf[2 * P];
static double ys2[2], ys2_nan[2], ws2_bad[2], ws2_nan[2];
static double sw_many[6000], ones20[20];

#define OP(name, body) \
    static pf_status name(struct fx *f) { (void)f; return (body); }

/* Line: single pairs. */
OP(l_push_nan_x, pf_line_push(f->line, NAN, 1.0))
OP(l_push_nan_y, pf_line_push(f->line, 1.0, NAN))
OP(l_push_inf_x, pf_line_push(f->line, INFINITY, 1.0))
OP(l_push_minf_y, pf_line_push(f->line, 1.0, -INFINITY))
OP(l_push_huge, pf_line_push(f->line, 1e300, -1e300))
OP(l_pushw_nan_x, pf_line_push_weighted(f->line, NAN, 1.0, 1.0))
OP(l_pushw_inf_y, pf_line_push_weighted(f->line, 1.0, INFINITY, 2.0))
OP(l_pushw_zero, pf_line_push_weighted(f->line, 1.0, 1.0, 0.0))
OP(l_pushw_mzero, pf_line_push_weighted(f->line, 1.0, 1.0, -0.0))
OP(l_pushw_neg, pf_line_push_weighted(f->line, 1.0, 1.0, -1.0))
OP(l_pushw_nan, pf_line_push_weighted(f->line, 1.0, 1.0, NAN))
OP(l_pushw_inf, pf_line_push_weighted(f->line, 1.0, 1.0, INFINITY))
OP(l_pushw_minf, pf_line_push_weighted(f->line, 1.0, 1.0, -INFINITY))
/* Line: blocks. */
OP(l_ext_empty, pf_line_extend(f->line, XS, YS, 0))
OP(l_ext_nan2, pf_line_extend(f->line, nan_at2, ONES, 4))
OP(l_ext_inf_y0, pf_line_extend(f->line, XS, inf_y0, 4))
OP(l_ext_deep_nan, pf_line_extend(f->line, deep_nan, deep_nan, 700))
OP(l_ext_huge, pf_line_extend(f->line, huge_alt, huge_alt, 20))
OP(l_extw_empty, pf_line_extend_weighted(f->line, XS, YS, ONES, 0))
OP(l_extw_zero1, pf_line_extend_weighted(f->line, XS, YS, w_zero1, 3))
OP(l_extw_neg2, pf_line_extend_weighted(f->line, XS, YS, w_neg2, 3))
OP(l_extw_nan0, pf_line_extend_weighted(f->line, XS, YS, w_nan0, 3))
OP(l_extw_inf1, pf_line_extend_weighted(f->line, XS, YS, w_inf1, 3))
OP(l_extw_nan_x, pf_line_extend_weighted(f->line, nan_at2, ONES, ONES, 4))
OP(l_extw_huge, pf_line_extend_weighted(f->line, huge_alt, huge_alt, ones20, 20))
/* Line: forgetting. */
OP(l_forget_0, pf_line_forget(f->line, 0.0))
OP(l_forget_m0, pf_line_forget(f->line, -0.0))
OP(l_forget_neg, pf_line_forget(f->line, -0.5))
OP(l_forget_gt1, pf_line_forget(f->line, 1.5))
OP(l_forget_1ulp, pf_line_forget(f->line, 1.0000000000000002))
OP(l_forget_nan, pf_line_forget(f->line, NAN))
OP(l_forget_inf, pf_line_forget(f->line, INFINITY))
OP(l_forget_minf, pf_line_forget(f->line, -INFINITY))
/* Line: merges. */
static pf_status l_merge_tier(struct fx *f) {
    uint32_t t = 0;
    pf_line_tier(f->line, &t);
    return pf_line_merge(f->line, t == PF_TIER_LEAN ? other_tier_full : other_tier_lean);
}
static pf_status l_merge_far(struct fx *f) {
    uint32_t t = 0;
    pf_line_tier(f->line, &t);
    return pf_line_merge(f->line, t == PF_TIER_LEAN ? far_lean : far_full);
}
/* Line: restores. */
static const uint8_t *own_bytes(struct fx *f, size_t *len) {
    uint32_t t = 0;
    pf_line_tier(f->line, &t);
    *len = t == PF_TIER_LEAN ? lean_len : full_len;
    return t == PF_TIER_LEAN ? lean_bytes : full_bytes;
}
static pf_status l_restore_mut(struct fx *f, size_t at, uint8_t to, long dlen) {
    size_t len;
    const uint8_t *b = own_bytes(f, &len);
    memcpy(scratch, b, len);
    scratch[len] = 0;
    if (at < len) scratch[at] = to;
    return pf_line_restore(f->line, scratch, (size_t)((long)len + dlen));
}
static pf_status l_restore_other_tier(struct fx *f) {
    uint32_t t = 0;
    pf_line_tier(f->line, &t);
    return t == PF_TIER_LEAN ? pf_line_restore(f->line, full_bytes, full_len)
                             : pf_line_restore(f->line, lean_bytes, lean_len);
}
OP(l_restore_magic, l_restore_mut(f, 0, 0x00, 0))
OP(l_restore_version, l_restore_mut(f, 5, 0xFF, 0))
OP(l_restore_kind, l_restore_mut(f, 6, 9, 0))
static pf_status l_restore_empty(struct fx *f) {
    size_t len;
    const uint8_t *b = own_bytes(f, &len);
    return pf_line_restore(f->line, b, 0);
}
OP(l_restore_short, l_restore_mut(f, SIZE_MAX, 0, -1))
OP(l_restore_long, l_restore_mut(f, SIZE_MAX, 0, +1))
OP(l_restore_crc, l_restore_mut(f, 40, 0x5A, 0))
OP(l_restore_model, pf_line_restore(f->line, model_bytes, model_len))
OP(l_restore_levels, pf_line_restore(f->line, levels_bytes, levels_len))
OP(l_restore_tier, l_restore_other_tier(f))
/* Line: creation with a bad tier, re-initialisation over live storage. */
OP(l_layout_tier2, pf_line_layout(2u, &sink.layout))
OP(l_layout_tier_max, pf_line_layout(UINT32_MAX, &sink.layout))
OP(l_new_tier, pf_line_new(7u, (pf_line **)&sink.ptr))
OP(l_init_tier, pf_line_init_in(&storage, sizeof storage, 2u, (pf_line **)&sink.ptr))
OP(l_init_small, pf_line_init_in(&storage, 8, PF_TIER_LEAN, (pf_line **)&sink.ptr))
/* Line: queries with bad options or the wrong tier. */
OP(l_fit_opt4, pf_line_fit(f->line, 4u, &sink.fit))
OP(l_fit_opt_high, pf_line_fit(f->line, 0x80000000u, &sink.fit))
OP(l_fit_opt_all, pf_line_fit(f->line, UINT32_MAX, &sink.fit))
OP(l_xrange_lean, pf_line_x_range(f->line, &sink.d[0], &sink.d[1]))
OP(l_yrange_lean, pf_line_y_range(f->line, &sink.d[0], &sink.d[1]))
OP(l_quad_lean, pf_line_quadratic_check(f->line, &sink.quad))
OP(l_checks_lean, pf_line_stream_checks(f->line, &sink.checks))
OP(l_checks_aged, pf_line_stream_checks(f->line, &sink.checks))
OP(l_xrange_empty, pf_line_x_range(f->line, &sink.d[0], &sink.d[1]))
OP(l_fit_empty, pf_line_fit(f->line, 0, &sink.fit))
OP(l_slope_empty, pf_line_slope_intercept(f->line, &sink.d[0], &sink.d[1]))

/* Model (p = 3). */
static const double ROW3[P] = {1.0, 2.0, 4.0};
static const double ROW3_NAN[P] = {1.0, NAN, 4.0};
static const double ROW3_MINF[P] = {1.0, 2.0, -INFINITY};
static const double ROW3_HUGE[P] = {1.0, 1e300, 1e300};
static const double ROW4[4] = {1.0, 2.0, 4.0, 8.0};
OP(m_push_short, pf_model_push(f->model, ROW3, 2, 1.0))
OP(m_push_long, pf_model_push(f->model, ROW4, 4, 1.0))
OP(m_push_empty, pf_model_push(f->model, ROW3, 0, 1.0))
OP(m_push_nan, pf_model_push(f->model, ROW3_NAN, P, 1.0))
OP(m_push_minf, pf_model_push(f->model, ROW3_MINF, P, 1.0))
OP(m_push_y_nan, pf_model_push(f->model, ROW3, P, NAN))
OP(m_push_y_inf, pf_model_push(f->model, ROW3, P, INFINITY))
OP(m_push_huge, pf_model_push(f->model, ROW3_HUGE, P, 1e300))
OP(m_pushw_zero, pf_model_push_weighted(f->model, ROW3, P, 1.0, 0.0))
OP(m_pushw_mzero, pf_model_push_weighted(f->model, ROW3, P, 1.0, -0.0))
OP(m_pushw_neg, pf_model_push_weighted(f->model, ROW3, P, 1.0, -2.0))
OP(m_pushw_nan, pf_model_push_weighted(f->model, ROW3, P, 1.0, NAN))
OP(m_pushw_inf, pf_model_push_weighted(f->model, ROW3, P, 1.0, INFINITY))
OP(m_pushw_short, pf_model_push_weighted(f->model, ROW3, 2, 1.0, 1.0))
OP(m_pushw_row_nan, pf_model_push_weighted(f->model, ROW3_NAN, P, 1.0, 1.0))
OP(m_pow_nan_x, pf_model_push_powers(f->model, NAN, 1.0, 1.0))
OP(m_pow_inf_x, pf_model_push_powers(f->model, INFINITY, 1.0, 1.0))
OP(m_pow_nan_y, pf_model_push_powers(f->model, 1.0, NAN, 1.0))
OP(m_pow_zero_w, pf_model_push_powers(f->model, 1.0, 1.0, 0.0))
OP(m_pow_neg_w, pf_model_push_powers(f->model, 1.0, 1.0, -1.0))
OP(m_pow_nan_w, pf_model_push_powers(f->model, 1.0, 1.0, NAN))
OP(m_pow_huge_x, pf_model_push_powers(f->model, 1e300, 1.0, 1.0))
OP(m_pow_huge_y, pf_model_push_powers(f->model, 1.0, 1e300, 1.0))
OP(m_ext_mismatch, pf_model_extend(f->model, rows_ok, 2 * P - 1, ys2, 2))
OP(m_ext_mismatch_n, pf_model_extend(f->model, rows_ok, 2 * P, ys2, 3))
OP(m_ext_rows_only, pf_model_extend(f->model, rows_ok, 2 * P, ys2, 0))
OP(m_ext_empty, pf_model_extend(f->model, rows_ok, 0, ys2, 0))
OP(m_extw_empty, pf_model_extend_weighted(f->model, rows_ok, 0, ys2, ONES, 0))
OP(m_restore_levels, pf_model_restore(f->model, levels_bytes, levels_len))
OP(m_ext_nan_row1, pf_model_extend(f->model, rows_nan, 2 * P, ys2, 2))
OP(m_ext_inf_row1, pf_model_extend(f->model, rows_inf, 2 * P, ys2, 2))
OP(m_ext_nan_y1, pf_model_extend(f->model, rows_ok, 2 * P, ys2_nan, 2))
OP(m_ext_huge, pf_model_extend(f->model, rows_huge, 2 * P, ys2, 2))
OP(m_extw_bad_w1, pf_model_extend_weighted(f->model, rows_ok, 2 * P, ys2, ws2_bad, 2))
OP(m_extw_nan_w1, pf_model_extend_weighted(f->model, rows_ok, 2 * P, ys2, ws2_nan, 2))
OP(m_extw_mismatch, pf_model_extend_weighted(f->model, rows_ok, P, ys2, ONES, 2))
OP(m_extw_nan_row1, pf_model_extend_weighted(f->model, rows_nan, 2 * P, ys2, ONES, 2))
OP(m_extt_mismatch, pf_model_extend_threads(f->model, rows_ok, 2 * P - 1, ys2, 2, 2))
OP(m_extt_empty, pf_model_extend_threads(f->model, rows_ok, 0, ys2, 0, 2))
OP(m_extt_nan_row1, pf_model_extend_threads(f->model, rows_nan, 2 * P, ys2, 2, 0))
OP(m_extt_nan_y1, pf_model_extend_threads(f->model, rows_ok, 2 * P, ys2_nan, 2, 2))
OP(m_extt_huge, pf_model_extend_threads(f->model, rows_huge, 2 * P, ys2, 2, 3))
OP(m_exttw_bad_w1, pf_model_extend_weighted_threads(f->model, rows_ok, 2 * P, ys2, ws2_bad, 2, 2))
OP(m_exttw_nan_w1, pf_model_extend_weighted_threads(f->model, rows_ok, 2 * P, ys2, ws2_nan, 2, 0))
OP(m_exttw_mismatch, pf_model_extend_weighted_threads(f->model, rows_ok, P, ys2, ONES, 2, 2))
OP(m_forget_0, pf_model_forget(f->model, 0.0))
OP(m_forget_neg, pf_model_forget(f->model, -0.5))
OP(m_forget_gt1, pf_model_forget(f->model, 1.5))
OP(m_forget_nan, pf_model_forget(f->model, NAN))
OP(m_forget_inf, pf_model_forget(f->model, INFINITY))
OP(m_merge_p2, pf_model_merge(f->model, model_p2))
OP(m_merge_far, pf_model_merge(f->model, far_model))
OP(m_restore_p2, pf_model_restore(f->model, model2_bytes, model2_len))
OP(m_restore_line, pf_model_restore(f->model, lean_bytes, lean_len))
static pf_status m_restore_mut(struct fx *f, size_t at, uint8_t to, long dlen) {
    memcpy(scratch, model_bytes, model_len);
    scratch[model_len] = 0;
    if (at < model_len) scratch[at] = to;
    return pf_model_restore(f->model, scratch, (size_t)((long)model_len + dlen));
}
OP(m_restore_magic, m_restore_mut(f, 1, 0x00, 0))
OP(m_restore_version, m_restore_mut(f, 4, 0xEE, 0))
OP(m_restore_empty, m_restore_mut(f, SIZE_MAX, 0, -(long)model_len))
OP(m_restore_short, m_restore_mut(f, SIZE_MAX, 0, -1))
OP(m_restore_long, m_restore_mut(f, SIZE_MAX, 0, 1))
OP(m_restore_crc, m_restore_mut(f, 100, 0x3C, 0))
OP(m_layout_0, pf_model_layout(0, &sink.layout))
OP(m_layout_17, pf_model_layout(PF_MODEL_MAX_PARAMS + 1, &sink.layout))
OP(m_layout_max, pf_model_layout(SIZE_MAX, &sink.layout))
OP(m_new_0, pf_model_new(0, (pf_model **)&sink.ptr))
OP(m_new_17, pf_model_new(PF_MODEL_MAX_PARAMS + 1, (pf_model **)&sink.ptr))
OP(m_init_0, pf_model_init_in(&storage, sizeof storage, 0, (pf_model **)&sink.ptr))
OP(m_init_17, pf_model_init_in(&storage, sizeof storage, PF_MODEL_MAX_PARAMS + 1, (pf_model **)&sink.ptr))
OP(m_init_small, pf_model_init_in(&storage, 16, P, (pf_model **)&sink.ptr))
OP(m_fit_icpt, pf_model_fit(f->model, 3u, &sink.info, sink.d + 100, P, sink.d + 120, P))
OP(m_fit_cap, pf_model_fit(f->model, PF_INTERCEPT_DETECT, &sink.info, sink.d + 100, P - 1, sink.d + 120, P))
OP(m_cov_cap, pf_model_covariance(f->model, PF_INTERCEPT_DETECT, sink.d, P * P - 1))
OP(m_cov_icpt, pf_model_covariance(f->model, 99u, sink.d, P * P))
OP(m_ci_level_0, pf_model_coef_intervals(f->model, PF_INTERCEPT_DETECT, 0.0, sink.iv, P))
OP(m_ci_level_1, pf_model_coef_intervals(f->model, PF_INTERCEPT_DETECT, 1.0, sink.iv, P))
OP(m_ci_level_neg, pf_model_coef_intervals(f->model, PF_INTERCEPT_DETECT, -0.5, sink.iv, P))
OP(m_ci_level_nan, pf_model_coef_intervals(f->model, PF_INTERCEPT_DETECT, NAN, sink.iv, P))
OP(m_ci_level_big, pf_model_coef_intervals(f->model, PF_INTERCEPT_DETECT, 95.0, sink.iv, P))
OP(m_ci_level_below1, pf_model_coef_intervals(f->model, PF_INTERCEPT_DETECT, nextafter(1.0, 0.0), sink.iv, P))
OP(m_predict_nan, pf_model_predict(f->model, PF_INTERCEPT_DETECT, ROW3_NAN, P, sink.d))
OP(m_predict_len, pf_model_predict(f->model, PF_INTERCEPT_DETECT, ROW3, 2, sink.d))
OP(m_mean_level, pf_model_mean_response(f->model, PF_INTERCEPT_DETECT, ROW3, P, 1.0, sink.iv))
OP(m_mean_inf, pf_model_mean_response(f->model, PF_INTERCEPT_DETECT, ROW3_MINF, P, 0.95, sink.iv))
OP(m_pred_m0, pf_model_prediction(f->model, PF_INTERCEPT_DETECT, ROW3, P, 0, 0.95, sink.iv))
OP(m_pred_level, pf_model_prediction(f->model, PF_INTERCEPT_DETECT, ROW3, P, 1, NAN, sink.iv))
OP(m_lev_nan, pf_model_leverage(f->model, PF_INTERCEPT_DETECT, ROW3_NAN, P, sink.d))
static const double ROW3_FAR[P] = {1.0, 1e300, 1.0};
static const double ROW3_MAX[P] = {1e308, 1e308, 1e308};
OP(m_lev_far, pf_model_leverage(f->model, PF_INTERCEPT_DETECT, ROW3_FAR, P, sink.d))
OP(m_predict_max, pf_model_predict(f->model, PF_INTERCEPT_DETECT, ROW3_MAX, P, sink.d))
OP(m_mean_far, pf_model_mean_response(f->model, PF_INTERCEPT_DETECT, ROW3_FAR, P, 0.95, sink.iv))
OP(m_pred_far, pf_model_prediction(f->model, PF_INTERCEPT_DETECT, ROW3_FAR, P, 1, 0.95, sink.iv))
OP(m_lev_icpt, pf_model_leverage(f->model, 7u, ROW3, P, sink.d))
OP(m_fit_few, pf_model_fit(f->model, PF_INTERCEPT_DETECT, &sink.info, sink.d + 100, P, sink.d + 120, P))

/* Levels. */
static double lv_nan[3], lv_inf[3];
OP(v_push_nan_x, pf_levels_push(f->lv, NAN, 1.0))
OP(v_push_nan_y, pf_levels_push(f->lv, 1.0, NAN))
OP(v_push_inf_x, pf_levels_push(f->lv, -INFINITY, 1.0))
OP(v_push_inf_y, pf_levels_push(f->lv, 1.0, INFINITY))
OP(v_pushw_zero, pf_levels_push_weighted(f->lv, 1.0, 1.0, 0.0))
OP(v_pushw_neg, pf_levels_push_weighted(f->lv, 1.0, 1.0, -3.0))
OP(v_pushw_nan, pf_levels_push_weighted(f->lv, 1.0, 1.0, NAN))
OP(v_pushw_inf, pf_levels_push_weighted(f->lv, 1.0, 1.0, INFINITY))
OP(v_pushw_nan_x, pf_levels_push_weighted(f->lv, NAN, 1.0, 1.0))
OP(v_ext_nan, pf_levels_extend(f->lv, XS, lv_nan, 3))
OP(v_ext_inf, pf_levels_extend(f->lv, lv_inf, YS, 3))
OP(v_ext_empty, pf_levels_extend(f->lv, XS, YS, 0))
OP(v_push_new_level, pf_levels_push(f->lv, 1000.5, 1.0))
static double new_levels[40];
OP(v_ext_over, pf_levels_extend(f->lv, new_levels, new_levels, 40))
OP(v_merge_over, pf_levels_merge(f->lv, levels_full_store))
OP(v_lof_mismatch, pf_levels_lack_of_fit(f->lv, &good_fit, &sink.lof))
OP(v_init_small, pf_levels_init_in(&storage, 16, (pf_levels **)&sink.ptr))
static const double HUGE_PAIR_X[2] = {1.0, 1.0}; /* a level every state has or can add */
static const double HUGE_PAIR_Y[2] = {1e300, -1e300};
OP(v_ext_huge, pf_levels_extend(f->lv, HUGE_PAIR_X, HUGE_PAIR_Y, 2))
OP(v_push_huge, pf_levels_push(f->lv, 1.0, 1e300))
OP(v_merge_far, pf_levels_merge(f->lv, levels_far))
OP(v_restore_line, pf_levels_restore(f->lv, lean_bytes, lean_len))
OP(v_restore_model, pf_levels_restore(f->lv, model_bytes, model_len))
static pf_status v_restore_mut(struct fx *f, size_t at, uint8_t to, long dlen) {
    memcpy(scratch, levels_bytes, levels_len);
    scratch[levels_len] = 0;
    if (at < levels_len) scratch[at] = to;
    return pf_levels_restore(f->lv, scratch, (size_t)((long)levels_len + dlen));
}
OP(v_restore_magic, v_restore_mut(f, 2, 0x00, 0))
OP(v_restore_version, v_restore_mut(f, 5, 0xFF, 0))
OP(v_restore_empty, v_restore_mut(f, SIZE_MAX, 0, -(long)levels_len))
OP(v_restore_short, v_restore_mut(f, SIZE_MAX, 0, -1))
OP(v_restore_long, v_restore_mut(f, SIZE_MAX, 0, 1))
OP(v_restore_crc, v_restore_mut(f, 20, 0x77, 0))

struct hcase {
    const char *name;
    unsigned kinds;
    unsigned states;
    pf_status (*op)(struct fx *);
    pf_status want;
};

#define LINES (K_LEAN | K_FULL)
#define FRAMED (S_MANY | S_AGED)
static const struct hcase hcases[] = {
    {"push nan x", LINES, S_ALL, l_push_nan_x, PF_ERR_NON_FINITE},
    {"push nan y", LINES, S_ALL, l_push_nan_y, PF_ERR_NON_FINITE},
    {"push +inf x", LINES, S_ALL, l_push_inf_x, PF_ERR_NON_FINITE},
    {"push -inf y", LINES, S_ALL, l_push_minf_y, PF_ERR_NON_FINITE},
    /* A lone far pair is a valid state when nothing is framed yet; once the
     * frame is fitted its square overflows. */
    {"push 1e300 into a framed state", LINES, FRAMED, l_push_huge, PF_ERR_OVERFLOW},
    {"push_weighted nan x", LINES, S_ALL, l_pushw_nan_x, PF_ERR_NON_FINITE},
    {"push_weighted inf y", LINES, S_ALL, l_pushw_inf_y, PF_ERR_NON_FINITE},
    {"push_weighted w 0", LINES, S_ALL, l_pushw_zero, PF_ERR_INVALID_WEIGHT},
    {"push_weighted w -0", LINES, S_ALL, l_pushw_mzero, PF_ERR_INVALID_WEIGHT},
    {"push_weighted w -1", LINES, S_ALL, l_pushw_neg, PF_ERR_INVALID_WEIGHT},
    {"push_weighted w nan", LINES, S_ALL, l_pushw_nan, PF_ERR_INVALID_WEIGHT},
    {"push_weighted w +inf", LINES, S_ALL, l_pushw_inf, PF_ERR_INVALID_WEIGHT},
    {"push_weighted w -inf", LINES, S_ALL, l_pushw_minf, PF_ERR_INVALID_WEIGHT},
    {"extend n 0", LINES, S_ALL, l_ext_empty, PF_ERR_EMPTY_INPUT},
    {"extend nan x at 2", LINES, S_ALL, l_ext_nan2, PF_ERR_NON_FINITE},
    {"extend inf y at 0", LINES, S_ALL, l_ext_inf_y0, PF_ERR_NON_FINITE},
    {"extend nan at 650 of 700", LINES, S_ALL, l_ext_deep_nan, PF_ERR_NON_FINITE},
    {"extend +-1e300", LINES, S_ALL, l_ext_huge, PF_ERR_OVERFLOW},
    {"extend_weighted n 0", LINES, S_ALL, l_extw_empty, PF_ERR_EMPTY_INPUT},
    {"extend_weighted w 0 at 1", LINES, S_ALL, l_extw_zero1, PF_ERR_INVALID_WEIGHT},
    {"extend_weighted w -1 at 2", LINES, S_ALL, l_extw_neg2, PF_ERR_INVALID_WEIGHT},
    {"extend_weighted w nan at 0", LINES, S_ALL, l_extw_nan0, PF_ERR_INVALID_WEIGHT},
    {"extend_weighted w inf at 1", LINES, S_ALL, l_extw_inf1, PF_ERR_INVALID_WEIGHT},
    {"extend_weighted nan x", LINES, S_ALL, l_extw_nan_x, PF_ERR_NON_FINITE},
    {"extend_weighted +-1e300", LINES, S_ALL, l_extw_huge, PF_ERR_OVERFLOW},
    {"forget 0", LINES, S_ALL, l_forget_0, PF_ERR_INVALID_FORGETTING},
    {"forget -0", LINES, S_ALL, l_forget_m0, PF_ERR_INVALID_FORGETTING},
    {"forget -0.5", LINES, S_ALL, l_forget_neg, PF_ERR_INVALID_FORGETTING},
    {"forget 1.5", LINES, S_ALL, l_forget_gt1, PF_ERR_INVALID_FORGETTING},
    {"forget 1 + ulp", LINES, S_ALL, l_forget_1ulp, PF_ERR_INVALID_FORGETTING},
    {"forget nan", LINES, S_ALL, l_forget_nan, PF_ERR_INVALID_FORGETTING},
    {"forget +inf", LINES, S_ALL, l_forget_inf, PF_ERR_INVALID_FORGETTING},
    {"forget -inf", LINES, S_ALL, l_forget_minf, PF_ERR_INVALID_FORGETTING},
    {"merge other tier", LINES, S_ALL, l_merge_tier, PF_ERR_TIER_MISMATCH},
    /* Merging into an empty state is a copy, so only framed states. */
    {"merge a state 1e300 away", LINES, FRAMED, l_merge_far, PF_ERR_OVERFLOW},
    {"restore bad magic", LINES, S_ALL, l_restore_magic, PF_ERR_STATE_BAD_MAGIC},
    {"restore unknown version", LINES, S_ALL, l_restore_version, PF_ERR_STATE_VERSION},
    {"restore unknown kind", LINES, S_ALL, l_restore_kind, PF_ERR_STATE_UNKNOWN_KIND},
    {"restore 0 bytes", LINES, S_ALL, l_restore_empty, PF_ERR_STATE_TRUNCATED},
    {"restore one byte short", LINES, S_ALL, l_restore_short, PF_ERR_STATE_TRUNCATED},
    {"restore one byte long", LINES, S_ALL, l_restore_long, PF_ERR_STATE_LENGTH},
    {"restore corrupted byte", LINES, S_ALL, l_restore_crc, PF_ERR_STATE_CHECKSUM},
    {"restore a model state", LINES, S_ALL, l_restore_model, PF_ERR_STATE_WRONG_KIND},
    {"restore a level state", LINES, S_ALL, l_restore_levels, PF_ERR_STATE_WRONG_KIND},
    {"restore the other tier", LINES, S_ALL, l_restore_tier, PF_ERR_STATE_WRONG_KIND},
    {"layout tier 2", LINES, S_FEW, l_layout_tier2, PF_ERR_BAD_ARGUMENT},
    {"layout tier max", LINES, S_FEW, l_layout_tier_max, PF_ERR_BAD_ARGUMENT},
    {"new tier 7", LINES, S_FEW, l_new_tier, PF_ERR_BAD_ARGUMENT},
    {"init_in tier 2 over live storage", LINES, S_ALL, l_init_tier, PF_ERR_BAD_ARGUMENT},
    {"init_in 8 bytes over live storage", LINES, S_ALL, l_init_small, PF_ERR_BUFFER_TOO_SMALL},
    {"fit option 4", LINES, S_ALL, l_fit_opt4, PF_ERR_BAD_ARGUMENT},
    {"fit option 1<<31", LINES, S_ALL, l_fit_opt_high, PF_ERR_BAD_ARGUMENT},
    {"fit every option bit", LINES, S_ALL, l_fit_opt_all, PF_ERR_BAD_ARGUMENT},
    {"fit empty", LINES, S_EMPTY, l_fit_empty, PF_ERR_TOO_FEW_POINTS},
    {"slope_intercept empty", LINES, S_EMPTY, l_slope_empty, PF_ERR_TOO_FEW_POINTS},
    {"x_range lean", K_LEAN, S_ALL, l_xrange_lean, PF_ERR_NEEDS_FULL_TIER},
    {"y_range lean", K_LEAN, S_ALL, l_yrange_lean, PF_ERR_NEEDS_FULL_TIER},
    {"quadratic_check lean", K_LEAN, S_ALL, l_quad_lean, PF_ERR_NEEDS_FULL_TIER},
    {"stream_checks lean", K_LEAN, S_ALL, l_checks_lean, PF_ERR_NEEDS_FULL_TIER},
    {"stream_checks weighted+forgotten", K_FULL, S_AGED, l_checks_aged, PF_ERR_DIAG_WEIGHTED},
    {"x_range empty", K_FULL, S_EMPTY, l_xrange_empty, PF_ERR_TOO_FEW_POINTS},

    {"model push row_len 2", K_MODEL, S_ALL, m_push_short, PF_ERR_MODEL_DIMENSION},
    {"model push row_len 4", K_MODEL, S_ALL, m_push_long, PF_ERR_MODEL_DIMENSION},
    {"model push row_len 0", K_MODEL, S_ALL, m_push_empty, PF_ERR_MODEL_DIMENSION},
    {"model push nan regressor", K_MODEL, S_ALL, m_push_nan, PF_ERR_MODEL_NON_FINITE},
    {"model push -inf regressor", K_MODEL, S_ALL, m_push_minf, PF_ERR_MODEL_NON_FINITE},
    {"model push nan y", K_MODEL, S_ALL, m_push_y_nan, PF_ERR_MODEL_NON_FINITE},
    {"model push inf y", K_MODEL, S_ALL, m_push_y_inf, PF_ERR_MODEL_NON_FINITE},
    {"model push 1e300 row", K_MODEL, S_ALL, m_push_huge, PF_ERR_MODEL_OVERFLOW},
    {"model push_weighted w 0", K_MODEL, S_ALL, m_pushw_zero, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_weighted w -0", K_MODEL, S_ALL, m_pushw_mzero, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_weighted w -2", K_MODEL, S_ALL, m_pushw_neg, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_weighted w nan", K_MODEL, S_ALL, m_pushw_nan, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_weighted w inf", K_MODEL, S_ALL, m_pushw_inf, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_weighted row_len 2", K_MODEL, S_ALL, m_pushw_short, PF_ERR_MODEL_DIMENSION},
    {"model push_weighted nan regressor", K_MODEL, S_ALL, m_pushw_row_nan, PF_ERR_MODEL_NON_FINITE},
    {"model push_powers nan x", K_MODEL, S_ALL, m_pow_nan_x, PF_ERR_MODEL_NON_FINITE},
    {"model push_powers inf x", K_MODEL, S_ALL, m_pow_inf_x, PF_ERR_MODEL_NON_FINITE},
    {"model push_powers nan y", K_MODEL, S_ALL, m_pow_nan_y, PF_ERR_MODEL_NON_FINITE},
    {"model push_powers w 0", K_MODEL, S_ALL, m_pow_zero_w, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_powers w -1", K_MODEL, S_ALL, m_pow_neg_w, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_powers w nan", K_MODEL, S_ALL, m_pow_nan_w, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model push_powers x 1e300 (x^2 overflows)", K_MODEL, S_ALL, m_pow_huge_x, PF_ERR_MODEL_OVERFLOW},
    {"model push_powers y 1e300", K_MODEL, S_ALL, m_pow_huge_y, PF_ERR_MODEL_OVERFLOW},
    {"model extend rows_len != n*p", K_MODEL, S_ALL, m_ext_mismatch, PF_ERR_MODEL_DIMENSION},
    {"model extend n != rows/p", K_MODEL, S_ALL, m_ext_mismatch_n, PF_ERR_MODEL_DIMENSION},
    {"model extend rows with n 0", K_MODEL, S_ALL, m_ext_rows_only, PF_ERR_MODEL_DIMENSION},
    {"model extend n 0", K_MODEL, S_ALL, m_ext_empty, PF_ERR_EMPTY_INPUT},
    {"model extend_weighted n 0", K_MODEL, S_ALL, m_extw_empty, PF_ERR_EMPTY_INPUT},
    {"model extend nan in row 1", K_MODEL, S_ALL, m_ext_nan_row1, PF_ERR_MODEL_NON_FINITE},
    {"model extend inf in row 1", K_MODEL, S_ALL, m_ext_inf_row1, PF_ERR_MODEL_NON_FINITE},
    {"model extend nan y at 1", K_MODEL, S_ALL, m_ext_nan_y1, PF_ERR_MODEL_NON_FINITE},
    {"model extend 1e300 in row 1", K_MODEL, S_ALL, m_ext_huge, PF_ERR_MODEL_OVERFLOW},
    {"model extend_weighted w -1 at 1", K_MODEL, S_ALL, m_extw_bad_w1, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model extend_weighted w nan at 1", K_MODEL, S_ALL, m_extw_nan_w1, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model extend_weighted rows_len != n*p", K_MODEL, S_ALL, m_extw_mismatch, PF_ERR_MODEL_DIMENSION},
    {"model extend_weighted nan in row 1", K_MODEL, S_ALL, m_extw_nan_row1, PF_ERR_MODEL_NON_FINITE},
    {"model extend_threads rows_len != n*p", K_MODEL, S_ALL, m_extt_mismatch, PF_ERR_MODEL_DIMENSION},
    {"model extend_threads n 0", K_MODEL, S_ALL, m_extt_empty, PF_ERR_EMPTY_INPUT},
    {"model extend_threads nan in row 1", K_MODEL, S_ALL, m_extt_nan_row1, PF_ERR_MODEL_NON_FINITE},
    {"model extend_threads nan y at 1", K_MODEL, S_ALL, m_extt_nan_y1, PF_ERR_MODEL_NON_FINITE},
    {"model extend_threads 1e300 in row 1", K_MODEL, S_ALL, m_extt_huge, PF_ERR_MODEL_OVERFLOW},
    {"model extend_weighted_threads w -1 at 1", K_MODEL, S_ALL, m_exttw_bad_w1, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model extend_weighted_threads w nan at 1", K_MODEL, S_ALL, m_exttw_nan_w1, PF_ERR_MODEL_INVALID_WEIGHT},
    {"model extend_weighted_threads rows_len != n*p", K_MODEL, S_ALL, m_exttw_mismatch, PF_ERR_MODEL_DIMENSION},
    {"model forget 0", K_MODEL, S_ALL, m_forget_0, PF_ERR_MODEL_FORGETTING},
    {"model forget -0.5", K_MODEL, S_ALL, m_forget_neg, PF_ERR_MODEL_FORGETTING},
    {"model forget 1.5", K_MODEL, S_ALL, m_forget_gt1, PF_ERR_MODEL_FORGETTING},
    {"model forget nan", K_MODEL, S_ALL, m_forget_nan, PF_ERR_MODEL_FORGETTING},
    {"model forget inf", K_MODEL, S_ALL, m_forget_inf, PF_ERR_MODEL_FORGETTING},
    {"model merge p 2", K_MODEL, S_ALL, m_merge_p2, PF_ERR_MODEL_DIMENSION},
    {"model merge a state 1e300 away", K_MODEL, FRAMED, m_merge_far, PF_ERR_MODEL_OVERFLOW},
    {"model restore p 2 state", K_MODEL, S_ALL, m_restore_p2, PF_ERR_MODEL_DIMENSION},
    {"model restore a line state", K_MODEL, S_ALL, m_restore_line, PF_ERR_STATE_WRONG_KIND},
    {"model restore a level state", K_MODEL, S_ALL, m_restore_levels, PF_ERR_STATE_WRONG_KIND},
    {"model restore bad magic", K_MODEL, S_ALL, m_restore_magic, PF_ERR_STATE_BAD_MAGIC},
    {"model restore unknown version", K_MODEL, S_ALL, m_restore_version, PF_ERR_STATE_VERSION},
    {"model restore 0 bytes", K_MODEL, S_ALL, m_restore_empty, PF_ERR_STATE_TRUNCATED},
    {"model restore one byte short", K_MODEL, S_ALL, m_restore_short, PF_ERR_STATE_TRUNCATED},
    {"model restore one byte long", K_MODEL, S_ALL, m_restore_long, PF_ERR_STATE_LENGTH},
    {"model restore corrupted byte", K_MODEL, S_ALL, m_restore_crc, PF_ERR_STATE_CHECKSUM},
    {"model layout p 0", K_MODEL, S_FEW, m_layout_0, PF_ERR_MODEL_PARAM_COUNT},
    {"model layout p 17", K_MODEL, S_FEW, m_layout_17, PF_ERR_MODEL_PARAM_COUNT},
    {"model layout p SIZE_MAX", K_MODEL, S_FEW, m_layout_max, PF_ERR_MODEL_PARAM_COUNT},
    {"model new p 0", K_MODEL, S_FEW, m_new_0, PF_ERR_MODEL_PARAM_COUNT},
    {"model new p 17", K_MODEL, S_FEW, m_new_17, PF_ERR_MODEL_PARAM_COUNT},
    {"model init_in p 0 over live storage", K_MODEL, S_ALL, m_init_0, PF_ERR_MODEL_PARAM_COUNT},
    {"model init_in p 17 over live storage", K_MODEL, S_ALL, m_init_17, PF_ERR_MODEL_PARAM_COUNT},
    {"model init_in 16 bytes over live storage", K_MODEL, S_ALL, m_init_small, PF_ERR_BUFFER_TOO_SMALL},
    {"model fit intercept 3", K_MODEL, S_ALL, m_fit_icpt, PF_ERR_BAD_ARGUMENT},
    {"model fit coefficients cap p-1", K_MODEL, S_MANY, m_fit_cap, PF_ERR_BUFFER_TOO_SMALL},
    {"model covariance cap p*p-1", K_MODEL, S_MANY, m_cov_cap, PF_ERR_BUFFER_TOO_SMALL},
    {"model covariance intercept 99", K_MODEL, S_MANY, m_cov_icpt, PF_ERR_BAD_ARGUMENT},
    {"model intervals level 0", K_MODEL, FRAMED, m_ci_level_0, PF_ERR_MODEL_LEVEL},
    {"model intervals level 1", K_MODEL, FRAMED, m_ci_level_1, PF_ERR_MODEL_LEVEL},
    {"model intervals level -0.5", K_MODEL, FRAMED, m_ci_level_neg, PF_ERR_MODEL_LEVEL},
    {"model intervals level nan", K_MODEL, FRAMED, m_ci_level_nan, PF_ERR_MODEL_LEVEL},
    {"model intervals level 95", K_MODEL, FRAMED, m_ci_level_big, PF_ERR_MODEL_LEVEL},
    {"model intervals level below 1 by an ulp", K_MODEL, FRAMED, m_ci_level_below1, PF_ERR_MODEL_LEVEL},
    {"model predict nan row", K_MODEL, FRAMED, m_predict_nan, PF_ERR_MODEL_NON_FINITE},
    {"model predict row_len 2", K_MODEL, FRAMED, m_predict_len, PF_ERR_MODEL_DIMENSION},
    {"model mean_response level 1", K_MODEL, FRAMED, m_mean_level, PF_ERR_MODEL_LEVEL},
    {"model mean_response -inf row", K_MODEL, FRAMED, m_mean_inf, PF_ERR_MODEL_NON_FINITE},
    {"model prediction m 0", K_MODEL, FRAMED, m_pred_m0, PF_ERR_MODEL_REPLICATES},
    {"model prediction level nan", K_MODEL, FRAMED, m_pred_level, PF_ERR_MODEL_LEVEL},
    {"model leverage nan row", K_MODEL, FRAMED, m_lev_nan, PF_ERR_MODEL_NON_FINITE},
    {"model leverage intercept 7", K_MODEL, FRAMED, m_lev_icpt, PF_ERR_BAD_ARGUMENT},
    /* Rows so far out that the result overflows. */
    {"model leverage row 1e300", K_MODEL, FRAMED, m_lev_far, PF_ERR_MODEL_OVERFLOW},
    {"model predict row 1e308", K_MODEL, FRAMED, m_predict_max, PF_ERR_MODEL_OVERFLOW},
    {"model mean_response row 1e300", K_MODEL, FRAMED, m_mean_far, PF_ERR_MODEL_OVERFLOW},
    {"model prediction row 1e300", K_MODEL, FRAMED, m_pred_far, PF_ERR_MODEL_OVERFLOW},
    {"model fit with too few rows", K_MODEL, S_EMPTY | S_FEW, m_fit_few, PF_ERR_TOO_FEW_ROWS},

    {"levels push nan x", K_LEVELS, S_ALL, v_push_nan_x, PF_ERR_NON_FINITE},
    {"levels push nan y", K_LEVELS, S_ALL, v_push_nan_y, PF_ERR_NON_FINITE},
    {"levels push -inf x", K_LEVELS, S_ALL, v_push_inf_x, PF_ERR_NON_FINITE},
    {"levels push inf y", K_LEVELS, S_ALL, v_push_inf_y, PF_ERR_NON_FINITE},
    {"levels push_weighted w 0", K_LEVELS, S_ALL, v_pushw_zero, PF_ERR_INVALID_WEIGHT},
    {"levels push_weighted w -3", K_LEVELS, S_ALL, v_pushw_neg, PF_ERR_INVALID_WEIGHT},
    {"levels push_weighted w nan", K_LEVELS, S_ALL, v_pushw_nan, PF_ERR_INVALID_WEIGHT},
    {"levels push_weighted w inf", K_LEVELS, S_ALL, v_pushw_inf, PF_ERR_INVALID_WEIGHT},
    {"levels push_weighted nan x", K_LEVELS, S_ALL, v_pushw_nan_x, PF_ERR_NON_FINITE},
    {"levels extend nan y at 2", K_LEVELS, S_ALL, v_ext_nan, PF_ERR_NON_FINITE},
    {"levels extend inf x at 1", K_LEVELS, S_ALL, v_ext_inf, PF_ERR_NON_FINITE},
    /* Documented: an empty block adds nothing (PF_OK), so nothing changes. */
    {"levels extend n 0", K_LEVELS, S_ALL, v_ext_empty, PF_OK},
    {"levels extend 40 new levels", K_LEVELS, S_ALL, v_ext_over, PF_ERR_LEVEL_CAPACITY},
    {"levels push a 33rd level", K_LEVELS, S_AGED, v_push_new_level, PF_ERR_LEVEL_CAPACITY},
    {"levels merge past capacity", K_LEVELS, S_FEW | S_MANY | S_AGED, v_merge_over, PF_ERR_LEVEL_CAPACITY},
    {"levels lack_of_fit count mismatch", K_LEVELS, S_EMPTY | S_FEW | S_AGED, v_lof_mismatch, PF_ERR_COUNT_MISMATCH},
    {"levels extend +-1e300 at one level", K_LEVELS, S_ALL, v_ext_huge, PF_ERR_OVERFLOW},
    {"levels push 1e300 beside readings near 1", K_LEVELS, S_FEW | S_MANY, v_push_huge, PF_ERR_OVERFLOW},
    {"levels merge a reading 1e300 away", K_LEVELS, S_FEW | S_MANY, v_merge_far, PF_ERR_OVERFLOW},
    {"levels restore a line state", K_LEVELS, S_ALL, v_restore_line, PF_ERR_STATE_WRONG_KIND},
    {"levels restore a model state", K_LEVELS, S_ALL, v_restore_model, PF_ERR_STATE_WRONG_KIND},
    {"levels restore bad magic", K_LEVELS, S_ALL, v_restore_magic, PF_ERR_STATE_BAD_MAGIC},
    {"levels restore unknown version", K_LEVELS, S_ALL, v_restore_version, PF_ERR_STATE_VERSION},
    {"levels restore 0 bytes", K_LEVELS, S_ALL, v_restore_empty, PF_ERR_STATE_TRUNCATED},
    {"levels restore one byte short", K_LEVELS, S_ALL, v_restore_short, PF_ERR_STATE_TRUNCATED},
    {"levels restore one byte long", K_LEVELS, S_ALL, v_restore_long, PF_ERR_STATE_LENGTH},
    {"levels restore corrupted byte", K_LEVELS, S_ALL, v_restore_crc, PF_ERR_STATE_CHECKSUM},
    {"levels init_in 16 bytes over live storage", K_LEVELS, S_ALL, v_init_small, PF_ERR_BUFFER_TOO_SMALL},
};

/* ---------------------------------------------------------------------- */
/* Building the states.                                                    */

static pf_status fill_line(pf_line *l, int state) {
    static double xs[20], ys[20];
    pf_status s = PF_OK;
    int i;
    for (i = 0; i < 20; i++) {
        xs[i] = 0.25 * i;
        ys[i] = 1.5 * xs[i] - 2.0 + 0.01 * cos(3.0 * xs[i]);
    }
    switch (state) {
    case S_EMPTY: break;
    case S_FEW: s = pf_line_extend(l, xs, ys, 3); break;
    case S_MANY: s = pf_line_extend(l, xs, ys, 20); break;
    case S_AGED:
        s = pf_line_extend(l, xs, ys, 20);
        if (s == PF_OK) s = pf_line_push_weighted(l, 0.5, 1.0, 3.0);
        if (s == PF_OK) s = pf_line_forget(l, 0.9);
        break;
    }
    return s;
}

static pf_status fill_model(pf_model *m, int state) {
    pf_status s = PF_OK;
    int i;
    double row[P];
    switch (state) {
    case S_EMPTY: break;
    case S_FEW:
        s = pf_model_push(m, ROW3, P, 3.5);
        if (s == PF_OK) s = pf_model_push_powers(m, 1.0, 2.0, 1.0);
        break;
    case S_MANY:
    case S_AGED:
        for (i = 0; i < 20 && s == PF_OK; i++) {
            double x = 0.3 * i;
            row[0] = 1.0;
            row[1] = x;
            row[2] = x * x;
            s = pf_model_push(m, row, P, 0.5 * x * x - x + 2.0 + 0.01 * sin(7.0 * x));
        }
        if (state == S_AGED && s == PF_OK) s = pf_model_push_weighted(m, ROW3, P, 3.0, 2.5);
        if (state == S_AGED && s == PF_OK) s = pf_model_forget(m, 0.95);
        break;
    }
    return s;
}

static pf_status fill_levels(pf_levels *l, int state) {
    pf_status s = PF_OK;
    int i;
    switch (state) {
    case S_EMPTY: break;
    case S_FEW: s = pf_levels_extend(l, XS, YS, 4); break;
    case S_MANY: s = pf_levels_extend(l, XS, YS, 10); break;
    case S_AGED: /* full: PF_LEVELS_CAPACITY levels with two readings each */
        for (i = 0; i < PF_LEVELS_CAPACITY && s == PF_OK; i++) {
            s = pf_levels_push(l, 0.5 * i, 1.0 + i);
            if (s == PF_OK) s = pf_levels_push_weighted(l, 0.5 * i, 1.1 + i, 2.0);
        }
        break;
    }
    return s;
}

/* The saved bytes, which stand for the whole state. */
static size_t snapshot(int kind, const struct fx *f, uint8_t *out) {
    size_t w = 0;
    pf_status s;
    if (kind == K_LEAN || kind == K_FULL) {
        s = pf_line_save(f->line, out, PF_STATE_MAX_LEN, &w);
    } else if (kind == K_MODEL) {
        s = pf_model_save(f->model, out, PF_STATE_MAX_LEN, &w);
    } else {
        s = pf_levels_save(f->lv, out, PF_STATE_MAX_LEN, &w);
    }
    if (s != PF_OK) {
        FAILF("snapshot failed: %u (%s)\n", (unsigned)s, pf_status_str(s));
        return 0;
    }
    return w;
}

static const char *kind_name(int kind) {
    switch (kind) {
    case K_LEAN: return "lean";
    case K_FULL: return "full";
    case K_MODEL: return "model";
    default: return "levels";
    }
}

static int state_index(int state) {
    int i = 0;
    while ((1 << i) != state) i++;
    return i;
}

/* Builds the object in `storage` (heap = 0) or on the heap. */
static pf_status build(int kind, int state, int heap, struct fx *f) {
    pf_status s;
    pf_layout lay;
    memset(f, 0, sizeof *f);
    memset(&storage, 0, sizeof storage);
    storage_used = 0;
    if (kind == K_LEAN || kind == K_FULL) {
        uint32_t tier = kind == K_LEAN ? PF_TIER_LEAN : PF_TIER_FULL;
        s = pf_line_layout(tier, &lay);
        if (s != PF_OK) return s;
        storage_used = lay.size;
        s = heap ? pf_line_new(tier, &f->line) : pf_line_init_in(&storage, sizeof storage, tier, &f->line);
        return s != PF_OK ? s : fill_line(f->line, state);
    }
    if (kind == K_MODEL) {
        s = pf_model_layout(P, &lay);
        if (s != PF_OK) return s;
        if (lay.size > sizeof storage) return PF_ERR_BUFFER_TOO_SMALL;
        storage_used = lay.size;
        s = heap ? pf_model_new(P, &f->model) : pf_model_init_in(&storage, sizeof storage, P, &f->model);
        return s != PF_OK ? s : fill_model(f->model, state);
    }
    s = pf_levels_layout(&lay);
    if (s != PF_OK) return s;
    storage_used = lay.size;
    s = heap ? pf_levels_new(&f->lv) : pf_levels_init_in(&storage, sizeof storage, &f->lv);
    return s != PF_OK ? s : fill_levels(f->lv, state);
}

static void release(int heap, struct fx *f) {
    if (!heap) return;
    if (f->line) pf_line_free(f->line);
    if (f->model) pf_model_free(f->model);
    if (f->lv) pf_levels_free(f->lv);
}

static void run_handle_cases(void) {
    static uint8_t before[PF_STATE_MAX_LEN], after[PF_STATE_MAX_LEN];
    size_t ci;
    int kind, st, heap;
    for (ci = 0; ci < sizeof hcases / sizeof hcases[0]; ci++) {
        const struct hcase *c = &hcases[ci];
        for (kind = K_LEAN; kind <= K_LEVELS; kind <<= 1) {
            if (!(c->kinds & kind)) continue;
            for (st = S_EMPTY; st <= S_AGED; st <<= 1) {
                if (!(c->states & st)) continue;
                for (heap = 0; heap <= 1; heap++) {
                    struct fx f;
                    size_t nb, na;
                    pf_status got, s;
                    int f0;
                    const char *where = heap ? "heap" : "caller storage";
                    s = build(kind, st, heap, &f);
                    if (s != PF_OK) {
                        FAILF("%s / %s / %s: set-up failed: %u (%s)\n", c->name, kind_name(kind),
                              state_names[state_index(st)], (unsigned)s, pf_status_str(s));
                        release(heap, &f);
                        continue;
                    }
                    f0 = failures;
                    nb = snapshot(kind, &f, before);
                    memcpy(&storage_before, &storage, sizeof storage);
                    sink_fill();
                    got = c->op(&f);
                    cases_run++;
                    if (got != c->want) {
                        FAILF("%s / %s / %s / %s: returned %u (%s), expected %u (%s)\n", c->name,
                              kind_name(kind), state_names[state_index(st)], where, (unsigned)got,
                              pf_status_str(got), (unsigned)c->want, pf_status_str(c->want));
                    }
                    if (!sink_intact()) {
                        FAILF("%s / %s / %s / %s: an output was written on error\n", c->name,
                              kind_name(kind), state_names[state_index(st)], where);
                    }
                    if (!heap && memcmp(&storage, &storage_before, storage_used) != 0) {
                        FAILF("%s / %s / %s: caller storage changed\n", c->name, kind_name(kind),
                              state_names[state_index(st)]);
                    }
                    na = snapshot(kind, &f, after);
                    if (na != nb || memcmp(before, after, nb) != 0) {
                        FAILF("%s / %s / %s / %s: saved state changed\n", c->name, kind_name(kind),
                              state_names[state_index(st)], where);
                    }
                    release(heap, &f);
                    if (failures != f0) cases_failed++;
                }
            }
        }
    }
}

/* ---------------------------------------------------------------------- */
/* Stateless entry points: status, output untouched, input fit untouched.  */

static double sw_nan[8], sw_inf[8], sw_const[8];
static double short_res[1];

#define SOP(name, body) \
    static pf_status name(void) { return (body); }

static const pf_fitted_line *G = &good_fit;
SOP(f_inv_nan, pf_fitted_line_invert(G, NAN, 1, 1.0, 0.95, &sink.inv))
SOP(f_inv_inf, pf_fitted_line_invert(G, INFINITY, 1, 1.0, 0.95, &sink.inv))
SOP(f_inv_rep0, pf_fitted_line_invert(G, 3.0, 0, 1.0, 0.95, &sink.inv))
SOP(f_inv_w0, pf_fitted_line_invert(G, 3.0, 1, 0.0, 0.95, &sink.inv))
SOP(f_inv_wneg, pf_fitted_line_invert(G, 3.0, 1, -1.0, 0.95, &sink.inv))
SOP(f_inv_wnan, pf_fitted_line_invert(G, 3.0, 1, NAN, 0.95, &sink.inv))
SOP(f_inv_l0, pf_fitted_line_invert(G, 3.0, 1, 1.0, 0.0, &sink.inv))
SOP(f_inv_l1, pf_fitted_line_invert(G, 3.0, 1, 1.0, 1.0, &sink.inv))
SOP(f_inv_lnan, pf_fitted_line_invert(G, 3.0, 1, 1.0, NAN, &sink.inv))
SOP(f_inv_lneg, pf_fitted_line_invert(G, 3.0, 1, 1.0, -0.95, &sink.inv))
SOP(f_inv_huge, pf_fitted_line_invert(G, 1e300, 1, 1.0, 0.95, &sink.inv))
SOP(f_cal_nan, pf_fitted_line_calibrated_value(G, NAN, 0.1, &sink.d[0], &sink.d[1]))
SOP(f_cal_inf, pf_fitted_line_calibrated_value(G, -INFINITY, 0.1, &sink.d[0], &sink.d[1]))
SOP(f_cal_uneg, pf_fitted_line_calibrated_value(G, 3.0, -0.1, &sink.d[0], &sink.d[1]))
SOP(f_cal_unan, pf_fitted_line_calibrated_value(G, 3.0, NAN, &sink.d[0], &sink.d[1]))
SOP(f_cal_uinf, pf_fitted_line_calibrated_value(G, 3.0, INFINITY, &sink.d[0], &sink.d[1]))
SOP(f_cal_huge, pf_fitted_line_calibrated_value(G, 1e300, 1e300, &sink.d[0], &sink.d[1]))
SOP(f_lim_src, pf_fitted_line_limits(G, 3u, 1.0, &sink.lim))
SOP(f_lim_src_max, pf_fitted_line_limits(G, UINT32_MAX, 1.0, &sink.lim))
SOP(f_lim_sneg, pf_fitted_line_limits(G, PF_SIGMA_GIVEN, -1.0, &sink.lim))
SOP(f_lim_snan, pf_fitted_line_limits(G, PF_SIGMA_GIVEN, NAN, &sink.lim))
SOP(f_lim_sinf, pf_fitted_line_limits(G, PF_SIGMA_GIVEN, INFINITY, &sink.lim))
SOP(f_lim_huge, pf_fitted_line_limits(G, PF_SIGMA_GIVEN, 1e308, &sink.lim))
SOP(f_lim_origin, pf_fitted_line_limits(&origin_fit, PF_SIGMA_INTERCEPT_SE, 0.0, &sink.lim))
SOP(f_dec_a0, pf_fitted_line_decision_limits(G, 0.0, 0.05, 1, 1.0, &sink.dec))
SOP(f_dec_ahalf, pf_fitted_line_decision_limits(G, 0.5, 0.05, 1, 1.0, &sink.dec))
SOP(f_dec_anan, pf_fitted_line_decision_limits(G, NAN, 0.05, 1, 1.0, &sink.dec))
SOP(f_dec_bneg, pf_fitted_line_decision_limits(G, 0.05, -0.05, 1, 1.0, &sink.dec))
SOP(f_dec_binf, pf_fitted_line_decision_limits(G, 0.05, INFINITY, 1, 1.0, &sink.dec))
SOP(f_dec_rep0, pf_fitted_line_decision_limits(G, 0.05, 0.05, 0, 1.0, &sink.dec))
SOP(f_dec_w0, pf_fitted_line_decision_limits(G, 0.05, 0.05, 1, 0.0, &sink.dec))
SOP(f_dec_wnan, pf_fitted_line_decision_limits(G, 0.05, 0.05, 1, NAN, &sink.dec))
SOP(f_val_nan, pf_fitted_line_value(G, NAN, sink.d))
SOP(f_val_inf, pf_fitted_line_value(G, INFINITY, sink.d))
SOP(f_val_huge, pf_fitted_line_value(G, 1.7e308, sink.d))
SOP(f_mean_nan, pf_fitted_line_mean_band(G, NAN, 0.95, sink.iv))
SOP(f_mean_l0, pf_fitted_line_mean_band(G, 1.0, 0.0, sink.iv))
SOP(f_mean_l1, pf_fitted_line_mean_band(G, 1.0, 1.0, sink.iv))
SOP(f_mean_lnan, pf_fitted_line_mean_band(G, 1.0, NAN, sink.iv))
SOP(f_mean_huge, pf_fitted_line_mean_band(G, 1e300, 0.95, sink.iv))
SOP(f_pred_m0, pf_fitted_line_prediction(G, 1.0, 0, 0.95, sink.iv))
SOP(f_pred_inf, pf_fitted_line_prediction(G, -INFINITY, 1, 0.95, sink.iv))
SOP(f_pred_lbig, pf_fitted_line_prediction(G, 1.0, 1, 1.5, sink.iv))
SOP(f_pred_huge, pf_fitted_line_prediction(G, 1e300, 1, 0.95, sink.iv))
SOP(f_slope_l0, pf_fitted_line_slope_interval(G, 0.0, sink.iv))
SOP(f_slope_lnan, pf_fitted_line_slope_interval(G, NAN, sink.iv))
SOP(f_icpt_l1, pf_fitted_line_intercept_interval(G, 1.0, sink.iv))
SOP(f_icpt_linf, pf_fitted_line_intercept_interval(G, INFINITY, sink.iv))
SOP(f_crit_l0, pf_fitted_line_critical_value(G, 0.0, sink.d))
SOP(f_crit_lneg, pf_fitted_line_critical_value(G, -1.0, sink.d))
SOP(f_crit_lnan, pf_fitted_line_critical_value(G, NAN, sink.d))
/* The largest double below 1: 0.5 + level/2 rounds to 1, whose quantile is
 * infinite, so the level is refused too. */
SOP(f_crit_below1, pf_fitted_line_critical_value(G, nextafter(1.0, 0.0), sink.d))
SOP(f_slope_below1, pf_fitted_line_slope_interval(G, nextafter(1.0, 0.0), sink.iv))
SOP(f_inv_below1, pf_fitted_line_invert(G, 3.0, 1, 1.0, nextafter(1.0, 0.0), &sink.inv))
SOP(f_res_empty, pf_fitted_line_residuals(G, XS, YS, 0, sink.d, 10))
SOP(f_res_short, pf_fitted_line_residuals(G, XS, YS, 4, sink.d, 10))
SOP(f_res_nan10, pf_fitted_line_residuals(G, deep_nan, YS, 10, sink.d, 10))
SOP(f_res_inf10, pf_fitted_line_residuals(G, XS, lv_inf, 10, sink.d, 10))
SOP(f_res_count, pf_fitted_line_residuals(G, XS, YS, 9, sink.d, 10))
SOP(f_res_cap, pf_fitted_line_residuals(G, XS, YS, 10, sink.d, 9))
SOP(f_res_cap0, pf_fitted_line_residuals(G, XS, YS, 10, short_res, 0))
SOP(f_res_origin, pf_fitted_line_residuals(&origin_fit, XS, YS, 10, sink.d, 10))
SOP(f_res_weighted, pf_fitted_line_residuals(&weighted_fit, XS, YS, 10, sink.d, 10))
SOP(f_res_forgotten, pf_fitted_line_residuals(&forgotten_fit, XS, YS, 10, sink.d, 10))
SOP(f_inf_empty, pf_fitted_line_influence(G, XS, YS, 0, sink.infl, 10))
SOP(f_inf_nan10, pf_fitted_line_influence(G, deep_nan, YS, 10, sink.infl, 10))
SOP(f_inf_count, pf_fitted_line_influence(G, sw_many, sw_many, 11, sink.infl, 20))
SOP(f_inf_cap, pf_fitted_line_influence(G, XS, YS, 10, sink.infl, 9))
SOP(f_inf_origin, pf_fitted_line_influence(&origin_fit, XS, YS, 10, sink.infl, 10))
SOP(f_inf_weighted, pf_fitted_line_influence(&weighted_fit, XS, YS, 10, sink.infl, 10))
SOP(f_sw_empty, pf_shapiro_wilk(YS, 0, &sink.norm))
SOP(f_sw_nan, pf_shapiro_wilk(sw_nan, 8, &sink.norm))
SOP(f_sw_inf, pf_shapiro_wilk(sw_inf, 8, &sink.norm))
SOP(f_sw_two, pf_shapiro_wilk(YS, 2, &sink.norm))
SOP(f_sw_many, pf_shapiro_wilk(sw_many, 5001, &sink.norm))
SOP(f_sw_const, pf_shapiro_wilk(sw_const, 8, &sink.norm))
SOP(f_ad_empty, pf_anderson_darling(YS, 0, &sink.norm))
SOP(f_ad_nan, pf_anderson_darling(sw_nan, 8, &sink.norm))
SOP(f_ad_inf, pf_anderson_darling(sw_inf, 8, &sink.norm))
SOP(f_ad_const, pf_anderson_darling(sw_const, 8, &sink.norm))
SOP(f_peek_empty, pf_state_peek(lean_bytes, 0, &sink.sinfo))
SOP(f_peek_short, pf_state_peek(lean_bytes, PF_STATE_HEADER_LEN, &sink.sinfo))
SOP(f_peek_long, pf_state_peek(scratch, lean_len + 1, &sink.sinfo))
SOP(f_peek_magic, pf_state_peek(scratch + 1, lean_len, &sink.sinfo))
SOP(f_decl_short, pf_state_declared_len(lean_bytes, PF_STATE_HEADER_LEN - 1, &sink.sz))
SOP(f_decl_magic, pf_state_declared_len(scratch + 1, PF_STATE_HEADER_LEN, &sink.sz))

struct scase {
    const char *name;
    pf_status (*op)(void);
    pf_status want;
};

static const struct scase scases[] = {
    {"invert reading nan", f_inv_nan, PF_ERR_NON_FINITE},
    {"invert reading inf", f_inv_inf, PF_ERR_NON_FINITE},
    {"invert replicates 0", f_inv_rep0, PF_ERR_INVALID_COUNT},
    {"invert weight 0", f_inv_w0, PF_ERR_INVALID_WEIGHT},
    {"invert weight -1", f_inv_wneg, PF_ERR_INVALID_WEIGHT},
    {"invert weight nan", f_inv_wnan, PF_ERR_INVALID_WEIGHT},
    {"invert level 0", f_inv_l0, PF_ERR_INVALID_LEVEL},
    {"invert level 1", f_inv_l1, PF_ERR_INVALID_LEVEL},
    {"invert level nan", f_inv_lnan, PF_ERR_INVALID_LEVEL},
    {"invert level -0.95", f_inv_lneg, PF_ERR_INVALID_LEVEL},
    {"invert reading 1e300", f_inv_huge, PF_ERR_OVERFLOW},
    {"calibrated_value y nan", f_cal_nan, PF_ERR_NON_FINITE},
    {"calibrated_value y -inf", f_cal_inf, PF_ERR_NON_FINITE},
    {"calibrated_value u -0.1", f_cal_uneg, PF_ERR_INVALID_UNCERTAINTY},
    {"calibrated_value u nan", f_cal_unan, PF_ERR_INVALID_UNCERTAINTY},
    {"calibrated_value u inf", f_cal_uinf, PF_ERR_INVALID_UNCERTAINTY},
    {"calibrated_value y, u 1e300", f_cal_huge, PF_ERR_OVERFLOW},
    {"limits source 3", f_lim_src, PF_ERR_BAD_ARGUMENT},
    {"limits source max", f_lim_src_max, PF_ERR_BAD_ARGUMENT},
    {"limits sigma -1", f_lim_sneg, PF_ERR_INVALID_UNCERTAINTY},
    {"limits sigma nan", f_lim_snan, PF_ERR_INVALID_UNCERTAINTY},
    {"limits sigma inf", f_lim_sinf, PF_ERR_INVALID_UNCERTAINTY},
    {"limits intercept se through origin", f_lim_origin, PF_ERR_NO_INTERCEPT},
    {"limits sigma 1e308 (limits overflow)", f_lim_huge, PF_ERR_OVERFLOW},
    {"decision alpha 0", f_dec_a0, PF_ERR_INVALID_LEVEL},
    {"decision alpha 0.5", f_dec_ahalf, PF_ERR_INVALID_LEVEL},
    {"decision alpha nan", f_dec_anan, PF_ERR_INVALID_LEVEL},
    {"decision beta -0.05", f_dec_bneg, PF_ERR_INVALID_LEVEL},
    {"decision beta inf", f_dec_binf, PF_ERR_INVALID_LEVEL},
    {"decision replicates 0", f_dec_rep0, PF_ERR_INVALID_COUNT},
    {"decision weight 0", f_dec_w0, PF_ERR_INVALID_WEIGHT},
    {"decision weight nan", f_dec_wnan, PF_ERR_INVALID_WEIGHT},
    {"value x nan", f_val_nan, PF_ERR_NON_FINITE},
    {"value x inf", f_val_inf, PF_ERR_NON_FINITE},
    {"value x 1.7e308 (overflows)", f_val_huge, PF_ERR_NON_FINITE},
    {"mean_band x nan", f_mean_nan, PF_ERR_NON_FINITE},
    {"mean_band level 0", f_mean_l0, PF_ERR_INVALID_LEVEL},
    {"mean_band level 1", f_mean_l1, PF_ERR_INVALID_LEVEL},
    {"mean_band level nan", f_mean_lnan, PF_ERR_INVALID_LEVEL},
    {"mean_band x 1e300", f_mean_huge, PF_ERR_NON_FINITE},
    {"prediction m 0", f_pred_m0, PF_ERR_INVALID_COUNT},
    {"prediction x -inf", f_pred_inf, PF_ERR_NON_FINITE},
    {"prediction level 1.5", f_pred_lbig, PF_ERR_INVALID_LEVEL},
    {"prediction x 1e300", f_pred_huge, PF_ERR_NON_FINITE},
    {"slope_interval level 0", f_slope_l0, PF_ERR_INVALID_LEVEL},
    {"slope_interval level nan", f_slope_lnan, PF_ERR_INVALID_LEVEL},
    {"intercept_interval level 1", f_icpt_l1, PF_ERR_INVALID_LEVEL},
    {"intercept_interval level inf", f_icpt_linf, PF_ERR_INVALID_LEVEL},
    {"critical_value level 0", f_crit_l0, PF_ERR_INVALID_LEVEL},
    {"critical_value level -1", f_crit_lneg, PF_ERR_INVALID_LEVEL},
    {"critical_value level nan", f_crit_lnan, PF_ERR_INVALID_LEVEL},
    {"critical_value level below 1 by an ulp", f_crit_below1, PF_ERR_INVALID_LEVEL},
    {"slope_interval level below 1 by an ulp", f_slope_below1, PF_ERR_INVALID_LEVEL},
    {"invert level below 1 by an ulp", f_inv_below1, PF_ERR_INVALID_LEVEL},
    {"residuals len 0", f_res_empty, PF_ERR_EMPTY_INPUT},
    {"residuals 4 pairs of a 10-pair fit", f_res_short, PF_ERR_DIAG_FIT_MISMATCH},
    {"residuals nan x", f_res_nan10, PF_ERR_NON_FINITE},
    {"residuals inf y", f_res_inf10, PF_ERR_NON_FINITE},
    {"residuals 9 pairs of a 10-pair fit", f_res_count, PF_ERR_DIAG_FIT_MISMATCH},
    {"residuals cap 9 for 10", f_res_cap, PF_ERR_DIAG_OUTPUT_TOO_SHORT},
    {"residuals cap 0", f_res_cap0, PF_ERR_DIAG_OUTPUT_TOO_SHORT},
    {"residuals through origin", f_res_origin, PF_ERR_DIAG_THROUGH_ORIGIN},
    {"residuals weighted fit", f_res_weighted, PF_ERR_DIAG_WEIGHTED},
    {"residuals forgotten fit", f_res_forgotten, PF_ERR_DIAG_FORGOTTEN},
    {"influence len 0", f_inf_empty, PF_ERR_EMPTY_INPUT},
    {"influence nan x", f_inf_nan10, PF_ERR_NON_FINITE},
    {"influence 11 pairs of a 10-pair fit", f_inf_count, PF_ERR_DIAG_FIT_MISMATCH},
    {"influence cap 9 for 10", f_inf_cap, PF_ERR_DIAG_OUTPUT_TOO_SHORT},
    {"influence through origin", f_inf_origin, PF_ERR_DIAG_THROUGH_ORIGIN},
    {"influence weighted fit", f_inf_weighted, PF_ERR_DIAG_WEIGHTED},
    {"shapiro_wilk len 0", f_sw_empty, PF_ERR_EMPTY_INPUT},
    {"shapiro_wilk nan", f_sw_nan, PF_ERR_NON_FINITE},
    {"shapiro_wilk -inf", f_sw_inf, PF_ERR_NON_FINITE},
    {"shapiro_wilk 2 values", f_sw_two, PF_ERR_TOO_FEW_POINTS},
    {"shapiro_wilk 5001 values", f_sw_many, PF_ERR_DIAG_TOO_MANY_POINTS},
    {"shapiro_wilk constant", f_sw_const, PF_ERR_ZERO_RESIDUAL_VARIANCE},
    {"anderson_darling len 0", f_ad_empty, PF_ERR_EMPTY_INPUT},
    {"anderson_darling nan", f_ad_nan, PF_ERR_NON_FINITE},
    {"anderson_darling -inf", f_ad_inf, PF_ERR_NON_FINITE},
    {"anderson_darling constant", f_ad_const, PF_ERR_ZERO_RESIDUAL_VARIANCE},
    {"state_peek 0 bytes", f_peek_empty, PF_ERR_STATE_TRUNCATED},
    {"state_peek header only", f_peek_short, PF_ERR_STATE_TRUNCATED},
    {"state_peek one byte long", f_peek_long, PF_ERR_STATE_LENGTH},
    {"state_peek bad magic", f_peek_magic, PF_ERR_STATE_BAD_MAGIC},
    {"state_declared_len header short", f_decl_short, PF_ERR_STATE_TRUNCATED},
    {"state_declared_len bad magic", f_decl_magic, PF_ERR_STATE_BAD_MAGIC},
};

/* Field-wise comparison (the struct's padding bytes carry no value). */
static int same_fit(const pf_fitted_line *a, const pf_fitted_line *b) {
    size_t from = offsetof(pf_fitted_line, weight_sum);
    return a->through_origin == b->through_origin && a->known_variance == b->known_variance &&
           a->approximate == b->approximate && a->count == b->count &&
           memcmp((const char *)a + from, (const char *)b + from, sizeof *a - from) == 0;
}

static void run_stateless_cases(void) {
    size_t ci;
    pf_fitted_line fits_before[4];
    for (ci = 0; ci < sizeof scases / sizeof scases[0]; ci++) {
        const struct scase *c = &scases[ci];
        pf_status got;
        int f0 = failures;
        fits_before[0] = good_fit;
        fits_before[1] = origin_fit;
        fits_before[2] = weighted_fit;
        fits_before[3] = forgotten_fit;
        /* scratch: the lean bytes with one trailing byte, and shifted by one
         * (so scratch + 1 starts with a wrong magic). */
        memset(scratch, 0, sizeof scratch);
        memcpy(scratch, lean_bytes, lean_len);
        sink_fill();
        got = c->op();
        cases_run++;
        if (got != c->want) {
            FAILF("%s: returned %u (%s), expected %u (%s)\n", c->name, (unsigned)got,
                  pf_status_str(got), (unsigned)c->want, pf_status_str(c->want));
        }
        if (!sink_intact()) FAILF("%s: an output was written on error\n", c->name);
        if (!same_fit(&fits_before[0], &good_fit) || !same_fit(&fits_before[1], &origin_fit) ||
            !same_fit(&fits_before[2], &weighted_fit) || !same_fit(&fits_before[3], &forgotten_fit)) {
            FAILF("%s: an input fit changed\n", c->name);
        }
        if (failures != f0) cases_failed++;
    }
}

/* Forgetting that would underflow every weight to zero: the first
 * forget(1e-300) is valid, the second is refused (PF_ERR_OVERFLOW for a
 * line, PF_ERR_MODEL_OVERFLOW for a model) and must leave the state, and
 * the caller storage, as they were. */
static pf_status forget_in(int kind, struct fx *f, double lambda) {
    return kind == K_MODEL ? pf_model_forget(f->model, lambda) : pf_line_forget(f->line, lambda);
}

static void run_underflow_checks(void) {
    static uint8_t before[PF_STATE_MAX_LEN], after[PF_STATE_MAX_LEN];
    static const int kinds[] = {K_LEAN, K_FULL, K_MODEL};
    int k, st, f0;
    for (k = 0; k < 3; k++) {
        int kind = kinds[k];
        pf_status want = kind == K_MODEL ? PF_ERR_MODEL_OVERFLOW : PF_ERR_OVERFLOW;
        for (st = S_FEW; st <= S_AGED; st <<= 1) {
            struct fx f;
            size_t nb, na;
            pf_status s;
            f0 = failures;
            if (build(kind, st, 0, &f) != PF_OK || forget_in(kind, &f, 1e-300) != PF_OK) {
                FAILF("underflow / %s / %s: set-up failed\n", kind_name(kind), state_names[state_index(st)]);
                cases_failed++;
                continue;
            }
            nb = snapshot(kind, &f, before);
            memcpy(&storage_before, &storage, sizeof storage);
            s = forget_in(kind, &f, 1e-300);
            cases_run++;
            if (s != want)
                FAILF("underflow / %s / %s: returned %u (%s), expected %u\n", kind_name(kind),
                      state_names[state_index(st)], (unsigned)s, pf_status_str(s), (unsigned)want);
            na = snapshot(kind, &f, after);
            if (na != nb || memcmp(before, after, nb) != 0 || memcmp(&storage, &storage_before, storage_used) != 0)
                FAILF("underflow / %s / %s: state changed\n", kind_name(kind), state_names[state_index(st)]);
            if (failures != f0) cases_failed++;
        }
    }
}

/* Huge and tiny magnitudes that are valid input: both normality
 * statistics are location and scale invariant (by their definitions), and
 * scaling by a power of two is exact, so a sample scaled by 2^1022 (range
 * and squares overflow) or 2^-1000 (squares underflow; still normal
 * numbers) must give the same
 * statistic and p value, bit for bit, as the sample itself. */
static void run_scale_checks(void) {
    static const double base[9] = {-1.3, -0.4, 0.1, 0.2, 0.9, 1.4, 2.2, -0.7, 0.35};
    static const int shifts[4] = {1022, 600, -600, -1000};
    double v[9];
    pf_normality want_sw, want_ad, got;
    int k, i;
    if (pf_shapiro_wilk(base, 9, &want_sw) != PF_OK || pf_anderson_darling(base, 9, &want_ad) != PF_OK) {
        FAILF("normality of the base sample failed\n");
        return;
    }
    for (k = 0; k < 4; k++) {
        pf_status s;
        int f0 = failures;
        for (i = 0; i < 9; i++) v[i] = ldexp(base[i], shifts[k]);
        s = pf_shapiro_wilk(v, 9, &got);
        if (s != PF_OK || got.statistic != want_sw.statistic || got.p_value != want_sw.p_value)
            FAILF("shapiro_wilk of the sample times 2^%d: status %u, W %.17g (want %.17g), p %.17g (want %.17g)\n",
                  shifts[k], (unsigned)s, got.statistic, want_sw.statistic, got.p_value, want_sw.p_value);
        s = pf_anderson_darling(v, 9, &got);
        if (s != PF_OK || got.statistic != want_ad.statistic || got.p_value != want_ad.p_value)
            FAILF("anderson_darling of the sample times 2^%d: status %u, A2 %.17g (want %.17g), p %.17g (want %.17g)\n",
                  shifts[k], (unsigned)s, got.statistic, want_ad.statistic, got.p_value, want_ad.p_value);
        cases_run += 2;
        if (failures != f0) cases_failed++;
    }
}

/* ---------------------------------------------------------------------- */

int main(void) {
    pf_line *tmp = NULL;
    pf_model *mtmp = NULL;
    pf_levels *levels_tmp = NULL;
    int i;
    unsigned nkinds = 0;

    for (i = 0; i < 4; i++) nan_at2[i] = inf_y0[i] = (double)i;
    nan_at2[2] = NAN;
    inf_y0[0] = INFINITY;
    for (i = 0; i < 20; i++) {
        huge_alt[i] = i % 2 ? -1e300 : 1e300;
        huge_same[i] = 1e300;
        ones20[i] = 1.0;
    }
    for (i = 0; i < 700; i++) deep_nan[i] = 0.5 * i;
    deep_nan[650] = NAN;
    deep_nan[7] = NAN; /* within the first 10, for the retained-data cases */
    for (i = 0; i < 3; i++) w_zero1[i] = w_neg2[i] = w_nan0[i] = w_inf1[i] = 1.0 + i;
    w_zero1[1] = 0.0;
    w_neg2[2] = -1.0;
    w_nan0[0] = NAN;
    w_inf1[1] = INFINITY;
    for (i = 0; i < 2 * P; i++) rows_ok[i] = rows_nan[i] = rows_huge[i] = rows_inf[i] = 1.0 + i;
    rows_nan[P + 1] = NAN;
    rows_inf[P + 2] = INFINITY;
    rows_huge[P + 1] = 1e300;
    rows_huge[P + 2] = -1e300;
    ys2[0] = 1.0;
    ys2[1] = 2.0;
    ys2_nan[0] = 1.0;
    ys2_nan[1] = NAN;
    ws2_bad[0] = ws2_nan[0] = 1.0;
    ws2_bad[1] = -1.0;
    ws2_nan[1] = NAN;
    for (i = 0; i < 6000; i++) sw_many[i] = sin(0.37 * i) + 0.001 * i;
    for (i = 0; i < 8; i++) {
        sw_nan[i] = sw_inf[i] = 0.3 * i * i;
        sw_const[i] = 2.5;
    }
    sw_nan[5] = NAN;
    sw_inf[3] = -INFINITY;
    for (i = 0; i < 3; i++) lv_nan[i] = lv_inf[i] = 1.0 + i;
    lv_nan[2] = NAN;
    lv_inf[1] = INFINITY;
    for (i = 0; i < 40; i++) new_levels[i] = 500.0 + i;

    /* Helpers: merge sources, saved states, fits. */
    REQUIRE(pf_line_new(PF_TIER_LEAN, &other_tier_lean));
    REQUIRE(pf_line_new(PF_TIER_FULL, &other_tier_full));
    REQUIRE(pf_line_extend(other_tier_lean, XS, YS, 10));
    REQUIRE(pf_line_extend(other_tier_full, XS, YS, 10));
    REQUIRE(pf_line_new(PF_TIER_LEAN, &far_lean));
    REQUIRE(pf_line_new(PF_TIER_FULL, &far_full));
    REQUIRE(pf_line_extend(far_lean, huge_same, huge_same, 20));
    REQUIRE(pf_line_extend(far_full, huge_same, huge_same, 20));
    REQUIRE(pf_line_save(other_tier_lean, lean_bytes, sizeof lean_bytes, &lean_len));
    REQUIRE(pf_line_save(other_tier_full, full_bytes, sizeof full_bytes, &full_len));
    REQUIRE(pf_line_fit(other_tier_lean, 0, &good_fit));
    REQUIRE(pf_line_fit(other_tier_lean, PF_FIT_THROUGH_ORIGIN, &origin_fit));
    REQUIRE(pf_line_new(PF_TIER_LEAN, &tmp));
    REQUIRE(pf_line_extend_weighted(tmp, XS, YS, w_neg2, 2)); /* weights 1, 2 */
    REQUIRE(pf_line_extend(tmp, XS + 2, YS + 2, 8));
    REQUIRE(pf_line_fit(tmp, 0, &weighted_fit));
    REQUIRE(pf_line_reset(tmp));
    REQUIRE(pf_line_extend(tmp, XS, YS, 10));
    REQUIRE(pf_line_forget(tmp, 0.5));
    REQUIRE(pf_line_fit(tmp, 0, &forgotten_fit));
    REQUIRE(pf_line_free(tmp));

    REQUIRE(pf_model_new(2, &model_p2));
    REQUIRE(pf_model_push(model_p2, XS, 2, 1.0));
    REQUIRE(pf_model_save(model_p2, model2_bytes, sizeof model2_bytes, &model2_len));
    REQUIRE(pf_model_new(P, &mtmp));
    REQUIRE(fill_model(mtmp, S_MANY));
    REQUIRE(pf_model_save(mtmp, model_bytes, sizeof model_bytes, &model_len));
    REQUIRE(pf_model_free(mtmp));
    /* A valid model state far from the origin: rows near 1e150 (squares
     * near 1e300), which overflow against any state near 0. */
    /* PF_LEVELS_CAPACITY levels none of the states use. */
    REQUIRE(pf_levels_new(&levels_full_store));
    for (i = 0; i < PF_LEVELS_CAPACITY; i++) REQUIRE(pf_levels_push(levels_full_store, 100.0 + i, 1.0));
    REQUIRE(pf_levels_new(&levels_far));
    REQUIRE(pf_levels_push(levels_far, 1.0, 1e300));
    REQUIRE(pf_levels_new(&levels_tmp));
    REQUIRE(pf_levels_extend(levels_tmp, XS, YS, 10));
    REQUIRE(pf_levels_save(levels_tmp, levels_bytes, sizeof levels_bytes, &levels_len));
    REQUIRE(pf_levels_free(levels_tmp));
    REQUIRE(pf_model_new(P, &far_model));
    for (i = 0; i < 5; i++) {
        double row[P] = {1.0, 0.0, 0.0};
        row[1] = 1e150 * (1.0 + 0.1 * i);
        row[2] = 1e150 * (1.0 + 0.05 * i * i);
        REQUIRE(pf_model_push(far_model, row, P, 1e153));
    }

    run_handle_cases();
    run_stateless_cases();
    run_scale_checks();
    run_underflow_checks();

    for (i = 0; i < (int)(sizeof hcases / sizeof hcases[0]); i++) nkinds |= hcases[i].kinds;
    if (nkinds != (K_LEAN | K_FULL | K_MODEL | K_LEVELS)) FAILF("a kind has no case\n");

    pf_line_free(other_tier_lean);
    pf_line_free(other_tier_full);
    pf_line_free(far_lean);
    pf_line_free(far_full);
    pf_model_free(model_p2);
    pf_model_free(far_model);
    pf_levels_free(levels_full_store);
    pf_levels_free(levels_far);

    printf("bad-input matrix: %d handle rows, %d stateless rows, %d calls\n",
           (int)(sizeof hcases / sizeof hcases[0]), (int)(sizeof scases / sizeof scases[0]),
           cases_run);
    if (failures != 0 && cases_failed == 0) cases_failed = 1; /* a set-up check failed */
    printf("%d passed, %d failed\n", cases_run - cases_failed, cases_failed);
    return failures == 0 ? 0 : 1;
}
