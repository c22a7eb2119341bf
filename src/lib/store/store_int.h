/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Internal: the schema migrations embedded from db/NNN-*.sql at build time. */
#ifndef BANDGAP_STORE_INT_H
#define BANDGAP_STORE_INT_H

struct bgi_sql_file {
    const char *name;
    const char *text;
};

/* Migrations in order: entry i takes the schema from version i to i + 1; ends with NULLs. */
extern const struct bgi_sql_file bgi_migrations[];

#endif
