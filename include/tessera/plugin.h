/*
 * Tessera problem plugin ABI, version 2 (docs/plugin-abi.md is the normative text).
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
 * Version 2 adds two optional exports, found by symbol: tsr_scene (the problem's static geometry)
 * and tsr_trace (what one genome does over time). A plugin without them, and any version 1
 * plugin, still loads; the host then draws and exports nothing for it.
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

/* Bumped whenever the ABI changes. The host loads every version from TSR_ABI_VERSION_OLDEST up to
 * TSR_ABI_VERSION; tsr_scene and tsr_trace are looked up only in version 2 plugins. */
#define TSR_ABI_VERSION 2u
#define TSR_ABI_VERSION_OLDEST 1u

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
/* Version 2, tsr_scene and tsr_trace only: the caller's buffers are too small. The plugin wrote
 * the sizes it needs into the tsr_figure and nothing else; call again with larger buffers. */
#define TSR_TOO_SMALL 2

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

/* ---- Version 2: figures (optional) --------------------------------------------------------- */

/*
 * A figure is a list of items. Every item is a table of `rows` x `columns` numbers (row-major,
 * in the problem's own units) with a name and column names, or a note of text:
 *
 *   kind              columns                        meaning
 *   TSR_POLYLINE      x, y  or  T, x, y              a line through the rows in order; T is a
 *                                                    time, phase or index column (traces)
 *   TSR_CIRCLES       x, y, r                        one circle per row
 *   TSR_POINTS        x, y  or  T, x, y              points, labelled by the item's name
 *   TSR_SERIES        T, v1, v2, ...                 time series against T (traces)
 *   TSR_DESCRIPTOR_MAP  ix, sx, ox, iy, sy, oy       one row (scene only): every elite's
 *                                                    descriptor d sits in the scene at
 *                                                    (ox + sx * d[ix], oy + sy * d[iy])
 *   TSR_NOTE          (none; rows = columns = 0)     `name` = key, `text` = value, e.g.
 *                                                    "units" = "m", "caution" = "..."
 *
 * Style is a drawing hint; the host may ignore it.
 */
#define TSR_POLYLINE 1u
#define TSR_CIRCLES 2u
#define TSR_POINTS 3u
#define TSR_SERIES 4u
#define TSR_DESCRIPTOR_MAP 5u
#define TSR_NOTE 6u

#define TSR_STYLE_LINE 0u   /* an ordinary line or path */
#define TSR_STYLE_WALL 1u   /* an obstacle's boundary: heavy and dark */
#define TSR_STYLE_ZONE 2u   /* an area such as a goal zone: filled, translucent */
#define TSR_STYLE_GUIDE 3u  /* construction or reference geometry: thin, dashed */
#define TSR_STYLE_ANCHOR 4u /* a fixed point (base, ground pivot, start): a marker */
#define TSR_STYLE_BODY 5u   /* the robot or mechanism at one instant: thick links, joint dots */

/* Flag: a TSR_POLYLINE whose last row joins its first (a closed path over one cycle). */
#define TSR_FLAG_CLOSED 1u

typedef struct tsr_item {
  uint32_t kind;  /* TSR_POLYLINE ... TSR_NOTE */
  uint32_t style; /* TSR_STYLE_* */
  uint32_t flags; /* TSR_FLAG_* */
  size_t rows;
  size_t columns;
  size_t values; /* offset into tsr_figure.values of the first number (rows * columns of them) */
  size_t name;   /* offset into tsr_figure.text of a NUL-terminated name, unique in the figure */
  size_t text;   /* offset into tsr_figure.text of a NUL-terminated string: the column names
                    separated by commas (data items) or the note's value (TSR_NOTE) */
} tsr_item;

/*
 * The caller owns the three buffers and states their capacities; the plugin always sets the
 * three counts to what the figure needs. When every count fits its capacity the plugin fills
 * the buffers and returns TSR_OK; otherwise it writes nothing else and returns TSR_TOO_SMALL.
 * Two calls therefore always suffice: the first with zero capacities (null buffers) learns the
 * sizes, the second fills buffers of those sizes. Both calls must give the same figure (a
 * figure is a pure function of the options and, for a trace, the genome).
 */
typedef struct tsr_figure {
  tsr_item* items;
  size_t item_capacity;
  size_t item_count;
  double* values;
  size_t value_capacity;
  size_t value_count;
  char* text;
  size_t text_capacity; /* bytes */
  size_t text_count;    /* bytes, every terminating NUL included */
} tsr_figure;

/*
 * Optional. The problem's static geometry in its own units: walls, zones, bases, pivots.
 * Returns TSR_OK, TSR_TOO_SMALL, or TSR_ERROR with a one-line reason in error[0..error_size).
 */
TSR_EXPORT int tsr_scene(tsr_instance* instance, tsr_figure* figure, char* error,
                         size_t error_size);

/*
 * Optional. What one genome (G numbers) does: paths and time series with a time, phase or index
 * column first, and the body at chosen instants. Same return codes as tsr_scene.
 */
TSR_EXPORT int tsr_trace(tsr_instance* instance, const double* genome, tsr_figure* figure,
                         char* error, size_t error_size);

#ifdef __cplusplus
}
#endif

#endif /* TESSERA_PLUGIN_H */
