/*
 * A popgauge plugin written in C against popgauge_plugin.h alone (no Rust): step "count-typed"
 * counts, per locus in play, the samples in play typed at both alleles. popgauge's acceptance
 * tests compile it with the system C compiler and compare its counts with the built-in
 * `diversity` step's n, which shows that the header describes the ABI the host speaks.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "popgauge_plugin.h"

static const char DESCRIPTOR[] =
    "{\"uses\":\"count-typed\",\"version\":\"0.1.0\","
    "\"summary\":\"Samples typed at both alleles, per locus (C test plugin)\",\"params\":[]}";

static int32_t put(pg_buf *out, char *text, size_t len) {
    out->ptr = (uint8_t *)text;
    out->len = len;
    out->capacity = len;
    return POPGAUGE_STATUS_OK;
}

static int32_t describe(pg_buf *out) {
    size_t len = sizeof DESCRIPTOR - 1;
    char *text = malloc(len);
    if (text == NULL) return POPGAUGE_STATUS_STEP_ERROR;
    memcpy(text, DESCRIPTOR, len);
    return put(out, text, len);
}

/* Appends a JSON string (names here are plain; quotes and backslashes are escaped). */
static size_t append_name(char *at, pg_str name) {
    size_t n = 0;
    at[n++] = '"';
    for (uint64_t i = 0; i < name.len; i++) {
        if (name.ptr[i] == '"' || name.ptr[i] == '\\') at[n++] = '\\';
        at[n++] = (char)name.ptr[i];
    }
    at[n++] = '"';
    return n;
}

static int32_t run(const pg_genotype_view *view, pg_str request, pg_buf *out) {
    (void)request;
    size_t room = 128;
    for (uint64_t l = 0; l < view->n_active_loci; l++) room += 2 * view->loci[view->active_loci[l]].name.len + 48;
    char *text = malloc(room);
    if (text == NULL) return POPGAUGE_STATUS_STEP_ERROR;
    size_t n = (size_t)sprintf(text, "{\"tables\":{\"loci\":{\"columns\":[\"locus\",\"typed\"],\"rows\":[");
    for (uint64_t l = 0; l < view->n_active_loci; l++) {
        uint32_t locus = view->active_loci[l];
        uint64_t typed = 0;
        for (uint64_t s = 0; s < view->n_active_samples; s++) {
            const uint16_t *cell = view->codes + (locus * view->n_samples + view->active_samples[s]) * 2;
            if (cell[0] != 0 && cell[1] != 0) typed++;
        }
        n += (size_t)sprintf(text + n, "%s[", l == 0 ? "" : ",");
        n += append_name(text + n, view->loci[locus].name);
        n += (size_t)sprintf(text + n, ",%llu]", (unsigned long long)typed);
    }
    n += (size_t)sprintf(text + n, "]}}}");
    return put(out, text, n);
}

static void free_buf(pg_buf buf) { free(buf.ptr); }

static const pg_plugin TABLE = {POPGAUGE_ABI_VERSION, 0, describe, run, free_buf};

const pg_plugin *popgauge_plugin_entry(void) { return &TABLE; }
