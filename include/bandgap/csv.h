/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The readings file: a CSV of temperature-resistance points (format in docs/readings-csv.md);
** the types are in readings.h.  A whole file into memory (bg_csv_read_file), or one reading
** at a time in bounded memory (bg_csv_reader). */
#ifndef BANDGAP_CSV_H
#define BANDGAP_CSV_H

#include <stdio.h>

#include "bandgap/error.h"
#include "bandgap/readings.h"

/* Parse 'len' bytes of readings text.  'name' is used in messages ("FILE:LINE: field 'NAME':
** why").  Lines end in LF, CRLF or a lone CR.  On error returns BG_EINVAL (or BG_ENOMEM) and
** leaves 'out' empty. */
BG_API int bg_csv_parse(const char *text, size_t len, const char *name, bg_readings *out,
                        bg_error *err);

/* Read and parse a file; "-" reads 'stdin'.  BG_ENOENT when it cannot be opened, BG_EIO on a
** read error, else as bg_csv_parse(). */
BG_API int bg_csv_read_file(const char *path, bg_readings *out, bg_error *err);

/* A readings file read one reading at a time: memory holds one block of the file (64 KiB,
** more only for a longer line), whatever the file's size. */
typedef struct bg_csv_reader bg_csv_reader;

/* Flags of the reader's constructors. */
#define BG_CSV_TWICE (1 << 0) /* the file will be read again (bg_csv_reader_rewind): a stream
                              ** that cannot seek (a pipe) is copied to a temporary file
                              ** (tmpfile()) as it is read */

/* Open the readings file 'path' ("-" reads 'stdin', named "<stdin>" in messages) and read its
** header.  Returns BG_OK and a reader in '*out' (free it with bg_csv_reader_free), or
** BG_ENOENT when the file cannot be opened, BG_EIO on a read error, BG_EINVAL for a header
** that is missing or wrong (as bg_csv_parse), BG_ENOMEM. */
BG_API int bg_csv_reader_open(const char *path, int flags, bg_csv_reader **out, bg_error *err);

/* The same on the open stream 'fp', from its current position, with 'name' ("-" when NULL)
** in messages.  The reader does not close 'fp', which must outlive it. */
BG_API int bg_csv_reader_new(FILE *fp, const char *name, int flags, bg_csv_reader **out,
                             bg_error *err);

/* The next reading: BG_OK with '*r' pointing to it (valid until the next call on 'rd'; its
** 'note' too), or with '*r' NULL at the end of the file.  A bad line is BG_EINVAL with the
** message of bg_csv_parse ("FILE:LINE: field 'NAME': why"); BG_EIO on a read error.  The
** reader may not be used after an error but to be freed or rewound. */
BG_API int bg_csv_reader_next(bg_csv_reader *rd, const bg_reading **r, bg_error *err);

/* Back to the first reading (the header is read again and must be the same; BG_EIO when it
** is not, naming the file as changed).  A stream that cannot seek can be rewound only when
** it was opened with BG_CSV_TWICE (else BG_EINVAL). */
BG_API int bg_csv_reader_rewind(bg_csv_reader *rd, bg_error *err);

/* The file's shape (delimiter, temperature unit, ref_ohms, the optional columns) as a
** bg_readings with no readings ('n' 0, 'v' NULL), valid while 'rd' is; and the file's name in
** messages. */
BG_API const bg_readings *bg_csv_reader_shape(const bg_csv_reader *rd);
BG_API const char *bg_csv_reader_name(const bg_csv_reader *rd);

/* Close the file if the reader opened it and free the reader; NULL is accepted. */
BG_API void bg_csv_reader_free(bg_csv_reader *rd);

/* Check an ISO 8601 date or date-time: YYYY-MM-DD[(T| )hh:mm[:ss[.f...]]][Z|(+|-)hh[:]mm]. */
BG_API int bg_csv_valid_time(const char *s);

#endif
