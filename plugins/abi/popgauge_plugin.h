/*
 * popgauge_plugin.h — the C ABI of popgauge external step libraries.
 *
 * A plugin is a shared library that exports one function, popgauge_plugin_entry, returning a
 * pointer to a static pg_plugin table. popgauge reads abi_version first and refuses a library
 * whose version differs from POPGAUGE_ABI_VERSION. All text is UTF-8 with pointer + length
 * (no terminating NUL). The layout here mirrors plugins/abi/src/ffi.rs; a test of the
 * popgauge-abi crate keeps the two in step. Evolution rules: plugins/abi/EVOLUTION.md.
 *
 * describe(out):            write the step descriptor (JSON, schemas/plugin-descriptor.schema.json)
 * run(view, request, out):  run the step; request is JSON {"params", "seed", "earlier",
 *                           "assessment", "input_findings"}; write the output JSON
 *                           {"tables", "findings", "citations", "filter"} into out
 * free_buf(buf):            release a buffer the plugin wrote into out
 *
 * describe and run return POPGAUGE_STATUS_OK, POPGAUGE_STATUS_STEP_ERROR (out holds a UTF-8
 * message) or POPGAUGE_STATUS_PANIC. The view and request are valid only during the call and
 * must not be modified. Genotype codes are locus-major: the two allele codes of matrix sample
 * s at matrix locus l are codes[(l * n_samples + s) * 2] and the next one; code 0 is untyped,
 * code k >= 1 is the allele labelled alleles[k - 1] of that locus.
 */
#ifndef POPGAUGE_PLUGIN_H
#define POPGAUGE_PLUGIN_H

#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

#define POPGAUGE_ABI_VERSION 2
#define POPGAUGE_ENTRY_SYMBOL "popgauge_plugin_entry"
#define POPGAUGE_STATUS_OK 0
#define POPGAUGE_STATUS_STEP_ERROR 1
#define POPGAUGE_STATUS_PANIC 2

typedef struct pg_str {
    const uint8_t *ptr;
    uint64_t len;
} pg_str;

typedef struct pg_buf {
    uint8_t *ptr;
    uint64_t len;
    uint64_t capacity;
} pg_buf;

typedef struct pg_sample {
    pg_str id;
    pg_str population;
    int32_t year;
    uint32_t reserved;
} pg_sample;

/* chromosome: a null pointer means unknown. position: 1-based base pair (VCF POS), valid only
 * when has_position is 1 (0 = unknown); both added in ABI version 2. reserved is always 0. */
typedef struct pg_locus {
    pg_str name;
    pg_str chromosome;
    const pg_str *alleles;
    uint64_t n_alleles;
    uint64_t position;
    uint32_t has_position;
    uint32_t reserved;
} pg_locus;

typedef struct pg_genotype_view {
    uint64_t n_samples;
    uint64_t n_loci;
    const pg_sample *samples;
    const pg_locus *loci;
    const uint16_t *codes;
    const uint32_t *active_samples;
    uint64_t n_active_samples;
    const uint32_t *active_loci;
    uint64_t n_active_loci;
} pg_genotype_view;

typedef struct pg_plugin {
    uint32_t abi_version;
    uint32_t reserved;
    int32_t (*describe)(pg_buf *out);
    int32_t (*run)(const pg_genotype_view *view, pg_str request, pg_buf *out);
    void (*free_buf)(pg_buf buf);
} pg_plugin;

const pg_plugin *popgauge_plugin_entry(void);

#ifdef __cplusplus
}
#endif

#endif /* POPGAUGE_PLUGIN_H */
