/*
 * C step of the cross-door round trip (see tests/roundtrip/src/main.rs for
 * the whole sequence): restores the states Rust saved after part A into
 * caller storage, checks that saving them again gives the same bytes, adds
 * part B (weighted pushes of its first third, its second third merged in
 * from a fresh accumulator, forgetting, then plain pushes of its last
 * third) and saves c_<kind>.state. It also checks that a level state with
 * more levels than PF_LEVELS_CAPACITY is refused with the storage unchanged.
 *
 * Usage: roundtrip <dir>   (the folder plumbfit-roundtrip wrote)
 */
#include "plumbfit.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define LAMBDA 0.995
#define MAXN 4096

static int failures = 0;
static const char *dir;

#define CHECK_OK(call)                                                       \
    do {                                                                     \
        pf_status s_ = (call);                                               \
        if (s_ != PF_OK) {                                                   \
            fprintf(stderr, "%s:%d: %s returned %u (%s)\n", __FILE__,        \
                    __LINE__, #call, (unsigned)s_, pf_status_str(s_));       \
            failures++;                                                      \
            return;                                                          \
        }                                                                    \
    } while (0)

static size_t read_file(const char *name, void *buf, size_t cap) {
    char path[1024];
    FILE *f;
    size_t n;
    snprintf(path, sizeof path, "%s/%s", dir, name);
    f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "cannot open %s\n", path);
        exit(1);
    }
    n = fread(buf, 1, cap, f);
    if (!feof(f) && fgetc(f) != EOF) {
        fprintf(stderr, "%s is larger than %zu bytes\n", path, cap);
        exit(1);
    }
    fclose(f);
    return n;
}

static void write_file(const char *name, const void *buf, size_t len) {
    char path[1024];
    FILE *f;
    snprintf(path, sizeof path, "%s/%s", dir, name);
    f = fopen(path, "wb");
    if (!f || fwrite(buf, 1, len, f) != len || fclose(f) != 0) {
        fprintf(stderr, "cannot write %s\n", path);
        exit(1);
    }
}

/* Part B: x, y, w, nominal levels (little-endian doubles, as this machine
 * stores them). */
static double bx[MAXN], by[MAXN], bw[MAXN], blx[MAXN];
static size_t bn;

static void load_part_b(void) {
    size_t nx = read_file("part_b_x.f64", bx, sizeof bx);
    size_t ny = read_file("part_b_y.f64", by, sizeof by);
    size_t nw = read_file("part_b_w.f64", bw, sizeof bw);
    size_t nl = read_file("part_b_lx.f64", blx, sizeof blx);
    if (nx != ny || nx != nw || nx != nl || nx % 8 != 0 || nx == 0) {
        fprintf(stderr, "part B files disagree in length\n");
        exit(1);
    }
    bn = nx / 8;
}

static void line_step(const char *kind, uint32_t tier, void *storage, size_t storage_len) {
    static uint8_t a[PF_STATE_MAX_LEN], again[PF_STATE_MAX_LEN], out[PF_STATE_MAX_LEN];
    char name[64];
    size_t alen, wlen = 0, h1 = bn / 3, h2 = 2 * bn / 3, i, want_len = 0;
    pf_line *acc = NULL, *other = NULL;
    pf_state_info info;
    snprintf(name, sizeof name, "a_%s.state", kind);
    alen = read_file(name, a, sizeof a);
    CHECK_OK(pf_state_peek(a, alen, &info));
    if (info.kind != (tier == PF_TIER_LEAN ? PF_STATE_KIND_LINE_LEAN : PF_STATE_KIND_LINE_FULL)) {
        fprintf(stderr, "%s: peek reports kind %u\n", name, (unsigned)info.kind);
        failures++;
    }
    CHECK_OK(pf_line_init_in(storage, storage_len, tier, &acc));
    CHECK_OK(pf_line_restore(acc, a, alen));
    CHECK_OK(pf_line_state_len(acc, &want_len));
    CHECK_OK(pf_line_save(acc, again, sizeof again, &wlen));
    if (wlen != alen || wlen != want_len || memcmp(a, again, alen) != 0) {
        fprintf(stderr, "%s: the C save of the restored state differs from the Rust bytes\n", kind);
        failures++;
    }
    for (i = 0; i < h1; i++) CHECK_OK(pf_line_push_weighted(acc, bx[i], by[i], bw[i]));
    CHECK_OK(pf_line_new(tier, &other));
    CHECK_OK(pf_line_extend(other, bx + h1, by + h1, h2 - h1));
    CHECK_OK(pf_line_merge(acc, other));
    CHECK_OK(pf_line_free(other));
    CHECK_OK(pf_line_forget(acc, LAMBDA));
    for (i = h2; i < bn; i++) CHECK_OK(pf_line_push(acc, bx[i], by[i]));
    CHECK_OK(pf_line_save(acc, out, sizeof out, &wlen));
    snprintf(name, sizeof name, "c_%s.state", kind);
    write_file(name, out, wlen);
    printf("C step %s: restored %zu bytes (same bytes saved back), added %zu pairs\n", kind, alen, bn);
}

static void model_step(void) {
    static uint8_t a[PF_STATE_MAX_LEN], again[PF_STATE_MAX_LEN], out[PF_STATE_MAX_LEN];
    static uint64_t storage[1024];
    static double rows[3 * MAXN];
    size_t alen, wlen = 0, h1 = bn / 3, h2 = 2 * bn / 3, i, p = 0;
    pf_model *m = NULL, *other = NULL;
    pf_layout lay;
    alen = read_file("a_model.state", a, sizeof a);
    CHECK_OK(pf_model_layout(3, &lay));
    if (lay.size > sizeof storage) {
        fprintf(stderr, "model storage too small: %zu bytes needed\n", lay.size);
        failures++;
        return;
    }
    CHECK_OK(pf_model_init_in(storage, sizeof storage, 3, &m));
    CHECK_OK(pf_model_restore(m, a, alen));
    CHECK_OK(pf_model_params(m, &p));
    CHECK_OK(pf_model_save(m, again, sizeof again, &wlen));
    if (p != 3 || wlen != alen || memcmp(a, again, alen) != 0) {
        fprintf(stderr, "model: the C save of the restored state differs from the Rust bytes\n");
        failures++;
    }
    for (i = 0; i < h1; i++) CHECK_OK(pf_model_push_powers(m, bx[i], by[i], bw[i]));
    for (i = h1; i < bn; i++) {
        rows[3 * (i - h1)] = 1.0;
        rows[3 * (i - h1) + 1] = bx[i];
        rows[3 * (i - h1) + 2] = bx[i] * bx[i];
    }
    CHECK_OK(pf_model_new(3, &other));
    CHECK_OK(pf_model_extend(other, rows, 3 * (h2 - h1), by + h1, h2 - h1));
    CHECK_OK(pf_model_merge(m, other));
    CHECK_OK(pf_model_free(other));
    CHECK_OK(pf_model_forget(m, LAMBDA));
    for (i = h2; i < bn; i++) CHECK_OK(pf_model_push(m, rows + 3 * (i - h1), 3, by[i]));
    CHECK_OK(pf_model_save(m, out, sizeof out, &wlen));
    write_file("c_model.state", out, wlen);
    printf("C step model: restored %zu bytes (same bytes saved back), added %zu rows\n", alen, bn);
}

static void levels_step(void) {
    static uint8_t a[PF_STATE_MAX_LEN], again[PF_STATE_MAX_LEN], out[PF_STATE_MAX_LEN];
    static pf_levels_storage storage;
    size_t alen, wlen = 0, h = bn / 2, i;
    pf_levels *lv = NULL, *other = NULL;
    alen = read_file("a_levels.state", a, sizeof a);
    CHECK_OK(pf_levels_init_in(&storage, sizeof storage, &lv));
    CHECK_OK(pf_levels_restore(lv, a, alen));
    CHECK_OK(pf_levels_save(lv, again, sizeof again, &wlen));
    if (wlen != alen || memcmp(a, again, alen) != 0) {
        fprintf(stderr, "levels: the C save of the restored store differs from the Rust bytes\n");
        failures++;
    }
    for (i = 0; i < h; i++) CHECK_OK(pf_levels_push_weighted(lv, blx[i], by[i], bw[i]));
    CHECK_OK(pf_levels_new(&other));
    CHECK_OK(pf_levels_extend(other, blx + h, by + h, bn - h));
    CHECK_OK(pf_levels_merge(lv, other));
    CHECK_OK(pf_levels_free(other));
    CHECK_OK(pf_levels_save(lv, out, sizeof out, &wlen));
    write_file("c_levels.state", out, wlen);
    {
        /* More levels than PF_LEVELS_CAPACITY, saved by the Rust door: the
         * restore is refused and the caller storage left as it was. */
        static uint8_t big[PF_STATE_MAX_LEN];
        static pf_levels_storage before;
        size_t blen = read_file("big_levels.state", big, sizeof big);
        pf_status s;
        memcpy(&before, &storage, sizeof storage);
        s = pf_levels_restore(lv, big, blen);
        if (s != PF_ERR_STATE_STORAGE_TOO_SMALL || memcmp(&before, &storage, sizeof storage) != 0) {
            fprintf(stderr, "levels: a 40-level state gave %u (%s), storage %s\n", (unsigned)s,
                    pf_status_str(s), memcmp(&before, &storage, sizeof storage) ? "changed" : "unchanged");
            failures++;
        }
    }
    printf("C step levels: restored %zu bytes (same bytes saved back), added %zu readings\n", alen, bn);
}

int main(int argc, char **argv) {
    static pf_line_lean_storage lean;
    static pf_line_full_storage full;
    if (argc != 2) {
        fprintf(stderr, "usage: %s <dir>\n", argv[0]);
        return 2;
    }
    dir = argv[1];
    load_part_b();
    line_step("lean", PF_TIER_LEAN, &lean, sizeof lean);
    line_step("full", PF_TIER_FULL, &full, sizeof full);
    model_step();
    levels_step();
    return failures == 0 ? 0 : 1;
}
