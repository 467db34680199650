/* test_cli_sweep.c: the pure parts of sweeps: SHA-256 (FIPS 180-4 example digests),
 * shard arithmetic, the CSV rows written by a sweep and read back by --resume and merge,
 * damaged-row detection, comparison of recorded inputs, atomic writes and merge checks.
 */
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "dpz_test.h"

#include "dpz_sha256.h"
#include "dpz_sweep.h"

/* ---- SHA-256 -------------------------------------------------------------------------
 */
/* Example digests of NIST FIPS 180-4 (the "SHA256.pdf" example file of the NIST
 * Cryptographic Standards and Guidelines examples: "abc" and the 448-bit message), plus
 * the digest of the empty message and of one million 'a' (FIPS 180-2, appendix B.3). */
static void test_sha256_fips_examples(void **state)
{
    (void)state;
    char hex[65];
    dpz_sha256_buffer_hex("abc", 3, hex);
    assert_string_equal(
        hex, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    dpz_sha256_buffer_hex("", 0, hex);
    assert_string_equal(
        hex, "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
    const char *m448 = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq";
    dpz_sha256_buffer_hex(m448, strlen(m448), hex);
    assert_string_equal(
        hex, "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
    /* One million 'a', fed in chunks of 997 bytes (not a multiple of the block size). */
    char chunk[997];
    memset(chunk, 'a', sizeof chunk);
    dpz_sha256 ctx;
    unsigned char d[32];
    dpz_sha256_init(&ctx);
    size_t left = 1000000;
    while (left > 0) {
        size_t n = left < sizeof chunk ? left : sizeof chunk;
        dpz_sha256_update(&ctx, chunk, n);
        left -= n;
    }
    dpz_sha256_final(&ctx, d);
    dpz_sha256_hex(d, hex);
    assert_string_equal(
        hex, "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0");
}

/* Padding edge cases: messages of 55, 56 and 64 bytes cross the one-block/two-block
 * boundary of FIPS 180-4 5.1.1; split feeding must give the one-shot digest. */
static void test_sha256_split_equals_whole(void **state)
{
    (void)state;
    unsigned char msg[200];
    for (size_t i = 0; i < sizeof msg; i++)
        msg[i] = (unsigned char)(i * 37u + 11u);
    const size_t lens[] = {55, 56, 63, 64, 65, 119, 120, 200};
    for (size_t t = 0; t < sizeof lens / sizeof lens[0]; t++) {
        char whole[65], split[65];
        dpz_sha256_buffer_hex(msg, lens[t], whole);
        for (size_t cut = 0; cut <= lens[t]; cut += 7) {
            dpz_sha256 ctx;
            unsigned char d[32];
            dpz_sha256_init(&ctx);
            dpz_sha256_update(&ctx, msg, cut);
            dpz_sha256_update(&ctx, msg + cut, lens[t] - cut);
            dpz_sha256_final(&ctx, d);
            dpz_sha256_hex(d, split);
            assert_string_equal(split, whole);
        }
    }
}

static char tmp_root[256];

static void make_tmp_root(void)
{
    if (tmp_root[0])
        return;
    snprintf(tmp_root, sizeof tmp_root, "/tmp/dpz_test_cli_sweep.XXXXXX");
    assert_non_null(mkdtemp(tmp_root));
}

static void test_sha256_file_matches_buffer(void **state)
{
    (void)state;
    make_tmp_root();
    char path[512], a[65], b[65];
    snprintf(path, sizeof path, "%s/hash.txt", tmp_root);
    FILE *f = fopen(path, "wb");
    assert_non_null(f);
    fputs("abc", f);
    fclose(f);
    dpz_err e;
    assert_int_equal(dpz_sha256_file_hex(path, a, &e), DPZ_OK);
    dpz_sha256_buffer_hex("abc", 3, b);
    assert_string_equal(a, b);
    snprintf(path, sizeof path, "%s/absent.txt", tmp_root);
    assert_int_equal(dpz_sha256_file_hex(path, a, &e), DPZ_EIO);
    assert_non_null(strstr(e.msg, "absent.txt"));
}

/* ---- shards ---------------------------------------------------------------------------
 */
static void test_sweep_shard_partition(void **state)
{
    (void)state;
    /* Every position of lists of 0..40 wavelengths belongs to exactly one of N shards,
     * and shard sizes differ by at most one (round-robin by definition). */
    for (size_t n = 0; n <= 40; n++)
        for (size_t count = 1; count <= 7; count++) {
            size_t seen[41] = {0};
            size_t total = 0, smin = SIZE_MAX, smax = 0;
            for (size_t idx = 0; idx < count; idx++) {
                size_t sz = dpz_sweep_shard_size(n, idx, count);
                total += sz;
                smin = sz < smin ? sz : smin;
                smax = sz > smax ? sz : smax;
                for (size_t j = 0; j < sz; j++) {
                    size_t p = dpz_sweep_shard_position(j, idx, count);
                    assert_true(p < n);
                    assert_int_equal(p % count, idx);
                    seen[p]++;
                }
            }
            assert_int_equal(total, n);
            assert_true(smax - smin <= 1);
            for (size_t p = 0; p < n; p++)
                assert_int_equal(seen[p], 1);
        }
    /* 10 wavelengths in 4 shards: 3, 3, 2, 2; shard 1 holds 1, 5, 9. */
    assert_int_equal(dpz_sweep_shard_size(10, 0, 4), 3);
    assert_int_equal(dpz_sweep_shard_size(10, 1, 4), 3);
    assert_int_equal(dpz_sweep_shard_size(10, 2, 4), 2);
    assert_int_equal(dpz_sweep_shard_size(10, 3, 4), 2);
    assert_int_equal(dpz_sweep_shard_position(2, 1, 4), 9);
    /* Shard index beyond the list or beyond the count: empty. */
    assert_int_equal(dpz_sweep_shard_size(3, 5, 8), 0);
    assert_int_equal(dpz_sweep_shard_size(3, 4, 4), 0);
}

/* cJSON prints 15 digits when they read back within its own epsilon: 1 ulp apart. */
static void test_sweep_same_wavelength(void **state)
{
    (void)state;
    double a = 200e-9 + 2 * 10e-9; /* 2.1999999999999998e-07, as LO + 2 STEP gives */
    assert_true(a != 2.2e-7);
    assert_true(dpz_sweep_same_wavelength(a, 2.2e-7));
    assert_true(dpz_sweep_same_wavelength(nextafter(a, 1.0), a));
    assert_false(dpz_sweep_same_wavelength(2.2e-7, 2.2000001e-7));
    assert_false(dpz_sweep_same_wavelength(2.2e-7, -2.2e-7));
}

/* ---- rows -----------------------------------------------------------------------------
 */
static void fill_result(dpz_sweep_result *r, size_t pos, double lambda, int converged)
{
    memset(r, 0, sizeof *r);
    r->position = pos;
    r->lambda0_m = lambda;
    r->converged = converged;
    r->have_tensor = converged;
    r->have_xsec = converged;
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            r->A[i][j] = CMPLX(2.385e-22 * (1 + i) / (3.0 + j) + lambda * 1e-15,
                               -1.0 / 7.0 * 1e-23 * (i - j));
    r->ext = 1.234567890123e-15;
    r->abs = 2.0 / 3.0 * 1e-16;
    r->sca = r->ext - r->abs;
    r->ext_dip = 1.1e-15;
    r->abs_dip = 0.7e-16;
    r->sca_dip = r->ext_dip - r->abs_dip;
    r->rel_diff = fabs(r->ext - r->ext_dip) / r->ext;
    r->iterations = 42 + pos;
    r->residual = 7.5e-9;
    r->reciprocity = 3.3e-15;
    r->energy_balance = 1.0 / 3.0;
    r->min_absorption_eig = -1e-17;
    r->dipole_validity = 0.0123;
    r->min_fluct_eig_m3 = 4.4e-24;
}

/* Writes a whole table (head + rows of `n` wavelengths) into buf; returns its length. */
static size_t make_table(dpz_table_kind kind, const dpz_sweep_result *r, size_t n,
                         char *buf, size_t cap)
{
    size_t len = dpz_sweep_table_head(kind, buf, cap);
    assert_true(len > 0);
    for (size_t i = 0; i < n; i++) {
        size_t m = dpz_sweep_rows(kind, &r[i], buf + len, cap - len);
        assert_true(m > 0);
        len += m;
    }
    return len;
}

static void test_sweep_rows_round_trip(void **state)
{
    (void)state;
    dpz_sweep_result r[3];
    fill_result(&r[0], 0, 400.5e-9, 1);
    fill_result(&r[1], 1, 410.5e-9, 0); /* not converged: values nan */
    fill_result(&r[2], 2, 420.5e-9, 1);
    static char buf[3 * DPZ_SWEEP_ROWS_MAX + 4096];
    for (int k = 0; k < DPZ_TABLE_COUNT; k++) {
        dpz_table_kind kind = (dpz_table_kind)k;
        size_t len = make_table(kind, r, 3, buf, sizeof buf);
        dpz_table t;
        dpz_err e;
        assert_int_equal(dpz_sweep_table_scan(kind, "t.csv", buf, len, &t, &e), DPZ_OK);
        assert_false(t.damaged);
        assert_int_equal(t.n_groups, 3);
        assert_int_equal(t.good_end, len);
        for (size_t g = 0; g < 3; g++) {
            assert_true(t.groups[g].lambda0_m == r[g].lambda0_m); /* %.17g is exact */
            assert_int_equal(t.groups[g].converged, r[g].converged);
            /* Parse every row of the group back. */
            dpz_sweep_result back;
            memset(&back, 0, sizeof back);
            size_t pos = t.groups[g].begin;
            while (pos < t.groups[g].end) {
                const char *nl = memchr(buf + pos, '\n', t.groups[g].end - pos);
                assert_non_null(nl);
                int elem = -1;
                assert_int_equal(dpz_sweep_row_parse(kind, buf + pos,
                                                     (size_t)(nl - (buf + pos)), &back,
                                                     &elem, &e),
                                 DPZ_OK);
                pos = (size_t)(nl - buf) + 1;
            }
            if (kind == DPZ_TABLE_ALPHA) {
                for (int i = 0; i < 6; i++)
                    for (int j = 0; j < 6; j++) {
                        if (r[g].converged) {
                            assert_true(back.A[i][j] == r[g].A[i][j]);
                        } else {
                            assert_true(isnan(creal(back.A[i][j])));
                            assert_true(isnan(cimag(back.A[i][j])));
                        }
                    }
            } else if (kind == DPZ_TABLE_XSEC) {
                if (r[g].converged) {
                    assert_true(back.ext == r[g].ext && back.abs == r[g].abs &&
                                back.sca == r[g].sca && back.rel_diff == r[g].rel_diff);
                    assert_true(back.sca_dip == r[g].sca_dip);
                } else {
                    assert_true(isnan(back.ext) && isnan(back.ext_dip));
                }
            } else {
                assert_int_equal(back.iterations, r[g].iterations);
                assert_true(back.residual == r[g].residual);
                if (r[g].converged) {
                    assert_true(back.energy_balance == r[g].energy_balance);
                    assert_true(back.min_absorption_eig == r[g].min_absorption_eig);
                    assert_true(back.min_fluct_eig_m3 == r[g].min_fluct_eig_m3);
                } else {
                    assert_true(isnan(back.reciprocity));
                }
            }
        }
        dpz_sweep_table_free(&t);
    }
}

/* A table cut at any byte keeps exactly the complete wavelengths before the cut and
 * reports the rest as damaged (what --resume cuts off after a SIGKILL). */
static void test_sweep_table_cut_anywhere(void **state)
{
    (void)state;
    dpz_sweep_result r[2];
    fill_result(&r[0], 0, 500e-9, 1);
    fill_result(&r[1], 1, 510e-9, 1);
    static char buf[2 * DPZ_SWEEP_ROWS_MAX + 4096];
    for (int k = 0; k < DPZ_TABLE_COUNT; k++) {
        dpz_table_kind kind = (dpz_table_kind)k;
        size_t len = make_table(kind, r, 2, buf, sizeof buf);
        dpz_table full;
        assert_int_equal(dpz_sweep_table_scan(kind, "t", buf, len, &full, NULL), DPZ_OK);
        size_t head = full.head_end, end0 = full.groups[0].end;
        for (size_t cut = head; cut <= len; cut++) {
            dpz_table t;
            assert_int_equal(dpz_sweep_table_scan(kind, "t", buf, cut, &t, NULL), DPZ_OK);
            size_t want = cut == len ? 2 : cut >= end0 ? 1 : 0;
            assert_int_equal(t.n_groups, want);
            assert_int_equal(t.damaged, cut != head && cut != end0 && cut != len);
            assert_int_equal(t.good_end, want == 2 ? len : want == 1 ? end0 : head);
            dpz_sweep_table_free(&t);
        }
        dpz_sweep_table_free(&full);
    }
}

static void expect_damage(dpz_table_kind kind, const char *text, size_t groups,
                          size_t line, const char *fragment)
{
    dpz_table t;
    dpz_err e;
    assert_int_equal(dpz_sweep_table_scan(kind, "t.csv", text, strlen(text), &t, &e),
                     DPZ_OK);
    assert_true(t.damaged);
    assert_int_equal(t.n_groups, groups);
    assert_int_equal(t.damage_line, line);
    if (!strstr(t.damage, fragment))
        fail_msg("damage \"%s\" lacks \"%s\"", t.damage, fragment);
    dpz_sweep_table_free(&t);
}

static void test_sweep_table_damaged_rows(void **state)
{
    (void)state;
    const char *h =
        "wavelength_m,iterations,residual,converged,reciprocity,energy_balance,"
        "min_absorption_eig,dipole_validity,min_fluct_eig_m3\n";
    const char *good = "4e-07,12,1e-09,1,1e-15,0,0,0.01,1e-24\n";
    char text[2048];
    /* An unparseable number on line 3. */
    snprintf(text, sizeof text, "# c\n%s%s4e-07,12,1e-09,1,1e-15,zero,0,0.01,1e-24\n", h,
             good);
    expect_damage(DPZ_TABLE_DIAG, text, 1, 4, "column 6");
    /* A missing field. */
    snprintf(text, sizeof text, "%s%s4.1e-07,12,1e-09,1,1e-15,0,0,0.01\n", h, good);
    expect_damage(DPZ_TABLE_DIAG, text, 1, 3, "8 fields");
    /* converged not 0/1, iterations negative, infinite value. */
    snprintf(text, sizeof text, "%s4.1e-07,12,1e-09,2,1e-15,0,0,0.01,1e-24\n", h);
    expect_damage(DPZ_TABLE_DIAG, text, 0, 2, "converged");
    snprintf(text, sizeof text, "%s4.1e-07,-12,1e-09,1,1e-15,0,0,0.01,1e-24\n", h);
    expect_damage(DPZ_TABLE_DIAG, text, 0, 2, "iterations");
    snprintf(text, sizeof text, "%s4.1e-07,12,1e-09,1,1e-15,inf,0,0.01,1e-24\n", h);
    expect_damage(DPZ_TABLE_DIAG, text, 0, 2, "column 6");
    /* alpha.csv: rows out of order and a group mixing wavelengths. */
    const char *ha = "wavelength_m,block,row,col,re,im,converged\n";
    snprintf(text, sizeof text, "%s4e-07,ee,0,1,1,2,1\n", ha);
    expect_damage(DPZ_TABLE_ALPHA, text, 0, 2, "out of order");
    snprintf(text, sizeof text, "%s4e-07,ee,0,0,1,2,1\n4.1e-07,ee,0,1,1,2,1\n", ha);
    expect_damage(DPZ_TABLE_ALPHA, text, 0, 3, "another wavelength");
    snprintf(text, sizeof text, "%s4e-07,xy,0,0,1,2,1\n", ha);
    expect_damage(DPZ_TABLE_ALPHA, text, 0, 2, "block");
    /* A wrong header is not a damaged tail but a wrong file. */
    dpz_table t;
    dpz_err e;
    snprintf(text, sizeof text, "# c\nwavelength,block\n");
    assert_int_equal(
        dpz_sweep_table_scan(DPZ_TABLE_ALPHA, "x.csv", text, strlen(text), &t, &e),
        DPZ_EFORMAT);
    assert_non_null(strstr(e.msg, "x.csv: line 2"));
    assert_int_equal(
        dpz_sweep_table_scan(DPZ_TABLE_ALPHA, "x.csv", "# only\n", 7, &t, &e),
        DPZ_EFORMAT);
}

static void test_sweep_rows_buffer_too_small(void **state)
{
    (void)state;
    dpz_sweep_result r;
    fill_result(&r, 0, 600e-9, 1);
    char small[100];
    assert_int_equal(dpz_sweep_rows(DPZ_TABLE_ALPHA, &r, small, sizeof small), 0);
    assert_int_equal(dpz_sweep_table_head(DPZ_TABLE_ALPHA, small, 20), 0);
    char big[DPZ_SWEEP_ROWS_MAX];
    /* Worst case: every number with 17 digits, sign and exponent. */
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++)
            r.A[i][j] = CMPLX(-1.2345678901234567e-300, -9.8765432109876543e-300);
    r.lambda0_m = 1.2345678901234567e-300;
    assert_true(dpz_sweep_rows(DPZ_TABLE_ALPHA, &r, big, sizeof big) > 0);
}

static void test_sweep_table_alloc_failure(void **state)
{
    (void)state;
    dpz_sweep_result r;
    fill_result(&r, 0, 600e-9, 1);
    char buf[DPZ_SWEEP_ROWS_MAX + 2048];
    size_t len = make_table(DPZ_TABLE_XSEC, &r, 1, buf, sizeof buf);
    dpz_table t;
    dpz_err e;
    dpz_alloc_fail_after(0);
    dpz_status st = dpz_sweep_table_scan(DPZ_TABLE_XSEC, "t", buf, len, &t, &e);
    dpz_alloc_fail_after(-1);
    assert_int_equal(st, DPZ_ENOMEM);
    assert_null(t.groups);
}

/* ---- summary inputs ------------------------------------------------------------------
 */
static const char *summary_fmt =
    "{\"program\":\"dipolize\",\"version\":\"%s\",\"input\":{\"path\":\"%s\","
    "\"sha256\":\"abc\"},\"materials\":[{\"label\":1,\"spec\":\"nk:x\",\"path\":\"%s\"}],"
    "\"options\":{\"tol\":%s},\"wavelengths_m\":[4e-07,5e-07,6e-07],"
    "\"shard\":{\"index\":%d,\"count\":2},\"results\":[]}";

static void test_sweep_inputs_differ(void **state)
{
    (void)state;
    char a[1024], b[1024];
    snprintf(a, sizeof a, summary_fmt, "0.1.0", "/a/s.vtk", "/a/x", "1e-08", 0);
    snprintf(b, sizeof b, summary_fmt, "0.1.0", "/b/s.vtk", "/b/x", "1e-08", 0);
    assert_null(dpz_sweep_inputs_differ(a, b, 1)); /* paths do not count */
    snprintf(b, sizeof b, summary_fmt, "0.1.0", "/a/s.vtk", "/a/x", "1e-09", 0);
    assert_string_equal(dpz_sweep_inputs_differ(a, b, 1), "options");
    snprintf(b, sizeof b, summary_fmt, "0.2.0", "/a/s.vtk", "/a/x", "1e-08", 0);
    assert_string_equal(dpz_sweep_inputs_differ(a, b, 0), "version");
    snprintf(b, sizeof b, summary_fmt, "0.1.0", "/a/s.vtk", "/a/x", "1e-08", 1);
    assert_null(dpz_sweep_inputs_differ(a, b, 0));
    assert_string_equal(dpz_sweep_inputs_differ(a, b, 1), "shard");
    assert_string_equal(dpz_sweep_inputs_differ(a, "{not json", 0), "summary");
}

/* ---- files and merge -----------------------------------------------------------------
 */
static void write_file(const char *dir, const char *name, const char *text, size_t len)
{
    dpz_err e;
    if (dpz_sweep_write_atomic(dir, name, text, len, &e) != DPZ_OK)
        fail_msg("%s", e.msg);
}

static void test_sweep_write_atomic(void **state)
{
    (void)state;
    make_tmp_root();
    char dir[512];
    snprintf(dir, sizeof dir, "%s/atomic", tmp_root);
    assert_int_equal(mkdir(dir, 0755), 0);
    write_file(dir, "f.txt", "first", 5);
    write_file(dir, "f.txt", "second!", 7);
    char path[600], *buf;
    size_t len;
    snprintf(path, sizeof path, "%s/f.txt", dir);
    assert_int_equal(dpz_sweep_read_file(path, &buf, &len, NULL), DPZ_OK);
    assert_int_equal(len, 7);
    assert_string_equal(buf, "second!");
    free(buf);
    dpz_err e;
    snprintf(path, sizeof path, "%s/no-such-dir", tmp_root);
    assert_int_equal(dpz_sweep_write_atomic(path, "f.txt", "x", 1, &e), DPZ_EIO);
    assert_non_null(strstr(e.msg, "no-such-dir"));
}

#define N_WL 5
static const double wl_list[N_WL] = {400e-9, 425e-9, 450e-9, 475e-9, 500e-9};

/* Writes a shard directory holding the wavelengths of `positions` (damage: 0 none,
 * 1 last alpha row cut short); `tol` lets a shard differ in its inputs. */
static void make_shard(const char *dir, const size_t *positions, size_t n, int index,
                       int count, const char *tol, int damage)
{
    assert_int_equal(mkdir(dir, 0755), 0);
    dpz_sweep_result r[N_WL];
    char results[2048] = "";
    for (size_t i = 0; i < n; i++) {
        fill_result(&r[i], positions[i], wl_list[positions[i]], positions[i] != 3);
        char one[256];
        snprintf(one, sizeof one,
                 "%s{\"wavelength_m\":%.17g,\"position\":%zu,\"converged\":%s,"
                 "\"iterations\":%zu,\"residual\":1e-09,\"seconds\":%zu.5}",
                 i ? "," : "", wl_list[positions[i]], positions[i],
                 positions[i] != 3 ? "true" : "false", (size_t)r[i].iterations, i);
        strcat(results, one);
    }
    static char buf[N_WL * DPZ_SWEEP_ROWS_MAX + 4096];
    for (int k = 0; k < DPZ_TABLE_COUNT; k++) {
        size_t len = make_table((dpz_table_kind)k, r, n, buf, sizeof buf);
        if (damage && k == DPZ_TABLE_ALPHA)
            len -= 3;
        write_file(dir, dpz_sweep_table_file((dpz_table_kind)k), buf, len);
    }
    char summary[4096];
    snprintf(summary, sizeof summary,
             "{\"program\":\"dipolize\",\"version\":\"t\",\"input\":{\"path\":\"s.vtk\","
             "\"sha256\":\"abc\"},\"materials\":[],\"options\":{\"tol\":%s},"
             "\"wavelengths_m\":[4e-07,4.25e-07,4.5e-07,4.75e-07,5e-07],"
             "\"shard\":{\"index\":%d,\"count\":%d},\"results\":[%s],\"finished\":true}",
             tol, index, count, results);
    write_file(dir, "summary.json", summary, strlen(summary));
    write_file(dir, "static.json", "{\"chi\":[]}\n", 11);
}

static int exists(const char *path)
{
    struct stat sb;
    return stat(path, &sb) == 0;
}

static void expect_merge_fails(const char *const *dirs, size_t n, const char *out,
                               dpz_status want, const char *fragment)
{
    dpz_err e;
    dpz_err_clear(&e);
    assert_int_equal(dpz_sweep_merge(dirs, n, out, &e), want);
    if (!strstr(e.msg, fragment))
        fail_msg("message \"%s\" lacks \"%s\"", e.msg, fragment);
    assert_false(exists(out));
}

static void test_sweep_merge_shards(void **state)
{
    (void)state;
    make_tmp_root();
    char d[8][600], out[600], whole[600];
    for (int i = 0; i < 8; i++)
        snprintf(d[i], sizeof d[i], "%s/m%d", tmp_root, i);
    const size_t all[N_WL] = {0, 1, 2, 3, 4};
    const size_t even[] = {0, 2, 4}, odd[] = {1, 3}, odd_short[] = {1};
    snprintf(whole, sizeof whole, "%s/whole", tmp_root);
    make_shard(whole, all, N_WL, 0, 1, "1e-08", 0);
    make_shard(d[0], even, 3, 0, 2, "1e-08", 0);
    make_shard(d[1], odd, 2, 1, 2, "1e-08", 0);
    make_shard(d[2], odd, 2, 1, 2, "1e-09", 0);       /* other inputs */
    make_shard(d[3], odd_short, 1, 1, 2, "1e-08", 0); /* wavelength 3 missing */
    make_shard(d[4], odd, 2, 1, 2, "1e-08", 1);       /* damaged */
    make_shard(d[5], even, 3, 0, 2, "1e-08", 0);      /* a copy: duplicates */

    /* Given in reverse order: the merged tables are still in wavelength order and equal
     * the single run's bytes. */
    snprintf(out, sizeof out, "%s/merged", tmp_root);
    const char *ok[2] = {d[1], d[0]};
    dpz_err e;
    if (dpz_sweep_merge(ok, 2, out, &e) != DPZ_OK)
        fail_msg("%s", e.msg);
    for (int k = 0; k < DPZ_TABLE_COUNT; k++) {
        char pa[700], pb[700], *a, *b;
        size_t la, lb;
        snprintf(pa, sizeof pa, "%s/%s", out, dpz_sweep_table_file((dpz_table_kind)k));
        snprintf(pb, sizeof pb, "%s/%s", whole, dpz_sweep_table_file((dpz_table_kind)k));
        assert_int_equal(dpz_sweep_read_file(pa, &a, &la, NULL), DPZ_OK);
        assert_int_equal(dpz_sweep_read_file(pb, &b, &lb, NULL), DPZ_OK);
        assert_int_equal(la, lb);
        assert_memory_equal(a, b, la);
        free(a);
        free(b);
    }
    char ps[700], *sa, *sb;
    size_t ls;
    snprintf(ps, sizeof ps, "%s/summary.json", out);
    assert_int_equal(dpz_sweep_read_file(ps, &sa, &ls, NULL), DPZ_OK);
    snprintf(ps, sizeof ps, "%s/summary.json", whole);
    assert_int_equal(dpz_sweep_read_file(ps, &sb, &ls, NULL), DPZ_OK);
    assert_null(dpz_sweep_inputs_differ(sa, sb, 1)); /* shard 0 of 1, as a single run */
    assert_non_null(strstr(sa, "\"position\":\t4"));
    free(sa);
    free(sb);
    /* The output exists now: a second merge into it is refused. */
    assert_int_equal(dpz_sweep_merge(ok, 2, out, &e), DPZ_EINVAL);
    assert_non_null(strstr(e.msg, "already exists"));
    assert_true(exists(out));

    snprintf(out, sizeof out, "%s/bad", tmp_root);
    const char *mixed[2] = {d[0], d[2]};
    expect_merge_fails(mixed, 2, out, DPZ_EINVAL, "different inputs: options");
    const char *missing[2] = {d[0], d[3]};
    expect_merge_fails(missing, 2, out, DPZ_EINVAL, "position 3 of 5");
    const char *damaged[2] = {d[0], d[4]};
    expect_merge_fails(damaged, 2, out, DPZ_EFORMAT, "alpha.csv: line");
    const char *dup[3] = {d[0], d[1], d[5]};
    expect_merge_fails(dup, 3, out, DPZ_EINVAL, "is in both");
    const char *twice[2] = {d[0], d[0]};
    expect_merge_fails(twice, 2, out, DPZ_EINVAL, "given twice");
    const char *absent[1] = {d[7]};
    expect_merge_fails(absent, 1, out, DPZ_EIO, "not a sweep directory");
    /* Allocation failure anywhere in the checks leaves nothing behind either. */
    for (long k = 0; k < 12; k++) {
        dpz_alloc_fail_after(k);
        dpz_status st = dpz_sweep_merge(ok, 2, out, &e);
        dpz_alloc_fail_after(-1);
        assert_int_equal(st, DPZ_ENOMEM);
        assert_false(exists(out));
    }
}

static int teardown_all(void **state)
{
    (void)state;
    if (tmp_root[0]) {
        char cmd[400];
        snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmp_root);
        if (system(cmd) != 0)
            return -1;
    }
    return 0;
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sha256_fips_examples),
        cmocka_unit_test(test_sha256_split_equals_whole),
        cmocka_unit_test(test_sha256_file_matches_buffer),
        cmocka_unit_test(test_sweep_shard_partition),
        cmocka_unit_test(test_sweep_same_wavelength),
        cmocka_unit_test(test_sweep_rows_round_trip),
        cmocka_unit_test(test_sweep_table_cut_anywhere),
        cmocka_unit_test(test_sweep_table_damaged_rows),
        cmocka_unit_test(test_sweep_rows_buffer_too_small),
        cmocka_unit_test(test_sweep_table_alloc_failure),
        cmocka_unit_test(test_sweep_inputs_differ),
        cmocka_unit_test(test_sweep_write_atomic),
        cmocka_unit_test(test_sweep_merge_shards),
    };
    return cmocka_run_group_tests(tests, NULL, teardown_all);
}
