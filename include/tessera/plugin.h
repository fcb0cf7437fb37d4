/*
 * Tessera problem plugin ABI, version 1.
 *
 * A problem plugin is a shared library exporting the functions declared below with C linkage.
 * Only plain C types cross this boundary: no C++ types, no exceptions. Errors come back as text
 * written into a caller-provided buffer.
 *
 * Lifetime and threading:
 *   - tessera creates one instance per worker thread with tsr_create(), so an instance is never
 *     used by two threads at once and a plugin need not be thread-safe across instances that
 *     share no global state.
 *   - every pointer inside tsr_metadata is owned by the instance and stays valid until
 *     tsr_destroy() is called on it.
 *   - tsr_evaluate() must be a pure function of the genome (and the options): the same genome
 *     always gives the same fitness, descriptor and extras. Tessera's bit-identical results for
 *     any number of threads depend on it.
 *
 * Build a plugin with the CMake helper `tessera_add_plugin(NAME SOURCES...)` from
 * find_package(Tessera), or by hand: any shared library exporting these symbols works.
 */
#ifndef TESSERA_PLUGIN_H
#define TESSERA_PLUGIN_H

#include <stddef.h>
#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

/* Bumped whenever a declaration below changes incompatibly. */
#define TSR_ABI_VERSION 1u

#if defined(_WIN32)
#define TSR_EXPORT __declspec(dllexport)
#else
#define TSR_EXPORT __attribute__((visibility("default")))
#endif

/* Opaque per-thread problem instance. */
typedef struct tsr_instance tsr_instance;

/* Description of an instance; all arrays have the stated sizes. */
typedef struct tsr_metadata {
  const char* name;               /* problem name, as used in run files */
  const char* summary;            /* one line: what the problem is */
  size_t genome_size;             /* G >= 1 */
  const double* genome_lower;     /* [G] */
  const double* genome_upper;     /* [G], each > lower */
  size_t descriptor_size;         /* D >= 1 */
  const double* descriptor_lower; /* [D] */
  const double* descriptor_upper; /* [D], each > lower */
  const char* const* descriptor_names; /* [D] */
  double fitness_lower;           /* lowest possible fitness: the QD-score offset */
  double fitness_upper;           /* highest possible fitness (may be +inf when unknown) */
  size_t extra_size;              /* E >= 0: extra per-evaluation figures (path length, ...) */
  const char* const* extra_names; /* [E] */
} tsr_metadata;

/* Status codes returned by tsr_create (through a null result) and tsr_evaluate. */
#define TSR_OK 0
#define TSR_ERROR 1

/* Returns TSR_ABI_VERSION as compiled into the plugin. */
TSR_EXPORT uint32_t tsr_abi_version(void);

/* Name of the problem the plugin provides (static storage). */
TSR_EXPORT const char* tsr_problem_name(void);

/*
 * Creates an instance from the [problem.options] table of a run file, serialised as TOML text
 * (an empty string means all defaults). On failure returns NULL and writes a one-line reason
 * into error[0..error_size).
 */
TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size);

/* Fills *out; the pointers stay valid until tsr_destroy(instance). */
TSR_EXPORT void tsr_describe(const tsr_instance* instance, tsr_metadata* out);

/*
 * Evaluates `count` genomes stored row-major in genomes[count * G]. Writes fitness[count],
 * descriptors[count * D], valid[count] (1 = usable, 0 = infeasible or failed) and
 * extras[count * E] (may be NULL when E = 0). Returns TSR_OK, or TSR_ERROR with a one-line
 * reason in error[0..error_size) when the whole batch could not be evaluated.
 */
TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* extras, char* error, size_t error_size);

/* Releases an instance. */
TSR_EXPORT void tsr_destroy(tsr_instance* instance);

#ifdef __cplusplus
}
#endif

#endif /* TESSERA_PLUGIN_H */
