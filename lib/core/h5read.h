/* HDF5 reading helpers of the grid reader (core/h5read.c).  Every
 * function names what it reads in its messages ("where/name"). */
#ifndef HRTRAIL_LIB_H5READ_H
#define HRTRAIL_LIB_H5READ_H

#include <stddef.h>

#include <hdf5.h>

#include "hrtrail.h"

/* Filters (deflate) shrink data by about a thousand times at most: a
 * dataset storing less than 1/TRAIL_MAX_FILTER_RATIO of what it declares
 * (plus some slack for tiny ones) is refused before anything is allocated. */
#define TRAIL_MAX_FILTER_RATIO 1100.0
#define TRAIL_STORAGE_SLACK_BYTES 4096.0

/* 1 if loc holds a hard link `name`, 0 if nothing of that name, -1 if a
 * soft or external link (refused: it could name another file, or a FIFO). */
int trail_h5_link(hid_t loc, const char *name);
/* Group `name` under loc through a hard link, or -1. */
hid_t trail_h5_group(hid_t loc, const char *name);

/* Free n strings and the array (NULL allowed). */
void trail_h5_free_strings(char **s, size_t n);
/* Number of points of a dataspace; *rank receives its rank. */
hssize_t trail_h5_points(hid_t space, int *rank);
/* A scalar text attribute, newly allocated in *out. */
int trail_h5_attr_text(hid_t loc, const char *name, const char *where, char **out, hrt_error *err);
/* A scalar numeric attribute (an integer if want_int). */
int trail_h5_attr_number(hid_t loc, const char *name, const char *where, int want_int, double *out, hrt_error *err);
/* A numeric dataset of the given rank and shape (dims[k] == 0: any, and
 * receives the size found), stored as integers (as_int) or floating point,
 * read as int or double into buf (NULL: only checked). */
int trail_h5_numeric(hid_t loc, const char *where, const char *name, int rank, hsize_t *dims, int as_int, void *buf,
                     hrt_error *err);
/* h5chunk.c: dataset d (as_int: int, else double) read into buf without
 * HDF5's filter pipeline where it is one chunk of the filters a grid file
 * uses and its checksum verifies: 1 if buf holds its values, 0 if not
 * (H5Dread decides then). */
int trail_h5_read_one_chunk(hid_t d, int as_int, void *buf);
/* A 1-D dataset kept as stored (h5chunk.c): its chunks' stored bytes read
 * and their Fletcher-32 checksums verified at open, inflated and converted
 * later without any HDF5 call (queries run on threads; HDF5 is not
 * thread-safe).  trail_h5_keep: 1 with *out set; 0 if the dataset's storage
 * is not of the filters a grid file uses or does not check out (read it
 * with trail_h5_numeric then, which refuses what HDF5 refuses); -1 out of
 * memory.  trail_h5_keep_values wraps values already read (n ints or
 * doubles, taken).  trail_h5_kept_decode: the n values into buf (int or
 * double), 1, or 0 if a stream does not inflate to its chunk's size or
 * memory runs out. */
typedef struct trail_h5_kept trail_h5_kept;
int trail_h5_keep(hid_t d, int as_int, trail_h5_kept **out);
int trail_h5_keep_values(size_t n, int as_int, void *values, trail_h5_kept **out);
size_t trail_h5_kept_points(const trail_h5_kept *k);
size_t trail_h5_kept_bytes(const trail_h5_kept *k);
int trail_h5_kept_decode(const trail_h5_kept *k, void *buf);
void trail_h5_kept_free(trail_h5_kept *k);
/* 1 if dataset `name` is stored with HDF5's Fletcher-32 checksum filter. */
int trail_h5_has_checksum(hid_t loc, const char *name);
/* A 1-D string dataset of 1..TRAIL_MAX_STRINGS entries, newly allocated in *out. */
int trail_h5_strings(hid_t loc, const char *where, const char *name, size_t *n, char ***out, hrt_error *err);

#endif
