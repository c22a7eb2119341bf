/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The calibration bench: a sequence file (INI, read by libinih) that says which probes sit on
** which scanner channels, the reference thermometer, the bath setpoints in order, how many
** readings to take and when a setpoint counts as settled; SCPI instruments over a raw TCP
** socket (the LXI convention, port 5025), a serial line or a USBTMC device file; the
** stability criterion; and the engine that drives the instruments through the sequence and
** commits every reading to the calibration database as it is taken.
**
** Caution: a calibration bath can hold hot oil or a cryogenic medium.  The limits in the
** sequence file are a check of the file, not a safety system: the bath's own protection, the
** local safety rules and accredited practice govern its use. */
#ifndef BANDGAP_BENCH_H
#define BANDGAP_BENCH_H

#include <stddef.h>

#include "bandgap/error.h"
#include "bandgap/readings.h"
#include "bandgap/store.h"
#include "bandgap/units.h"

#define BG_SEQ_MAXSP 64    /* setpoints */
#define BG_SEQ_MAXCH 64    /* probes (scanner channels) */
#define BG_SEQ_CMD 128     /* an SCPI command template */

/* The roles an instrument plays; one instrument may serve several (the same address). */
typedef enum bg_role {
    BG_ROLE_BATH = 0,  /* setpoint and bath temperature */
    BG_ROLE_METER,     /* the probe's resistance */
    BG_ROLE_SCANNER,   /* closes one channel */
    BG_ROLE_REFERENCE, /* the reference thermometer's readout */
    BG_NROLES
} bg_role;
/* "bath", "meter", "scanner", "reference". */
BG_API const char *bg_role_name(bg_role r);

typedef enum bg_transport { BG_TR_TCP = 1, BG_TR_SERIAL, BG_TR_USBTMC } bg_transport;

/* One instrument: where it is and the commands of its role.  'cmd[0]' and 'cmd[1]' are the
** role's two command templates, "{}" standing for the value: bath "SOUR:TEMP {}" and
** "MEAS:TEMP?" (setpoint, temperature), meter "MEAS:FRES?", scanner "ROUT:CLOS (@{})",
** reference "MEAS:TEMP?" (or "MEAS:FRES?" for a resistance readout). */
typedef struct bg_instr {
    bg_transport transport;
    char host[256];
    int port;               /* TCP; 5025 unless the file says */
    char device[256];       /* serial or USBTMC device file */
    int baud;               /* serial */
    double timeout_s;       /* per reply */
    char cmd[2][BG_SEQ_CMD];
    bg_temp_unit unit;      /* bath: the unit its setpoint and temperature are in */
    size_t line;            /* the section's line in the file */
} bg_instr;

typedef struct bg_seq_probe {
    char serial[BG_TEXT];
    char channel[32];       /* as the scanner names it: "101" */
    size_t line;
} bg_seq_probe;

/* A sequence file, checked. */
typedef struct bg_seq {
    char path[BG_NOTE];
    char sha256[65];                    /* of the file's bytes */
    char *text;                         /* the file as read (kept with the run) */
    char operator_name[BG_TEXT], medium[BG_TEXT], note[BG_NOTE];
    double setpoint_k[BG_SEQ_MAXSP];
    size_t nsp;
    size_t readings;                    /* per setpoint and channel */
    double measuring_current_a, measuring_voltage_v;
    /* stability */
    double window_s, max_drift_k_s, max_scatter_k, time_limit_s, sample_s;
    int stop_on_timeout;                /* 0: skip the setpoint; 1: stop the sequence */
    /* the medium */
    double min_k, max_k, safe_k;
    /* the reference thermometer as in the database, and the unit its readout gives */
    char ref_ident[BG_TEXT];
    bg_temp_unit ref_unit;              /* BG_UNIT_NONE with ref_ohms */
    int ref_ohms;
    bg_seq_probe probes[BG_SEQ_MAXCH];
    size_t nprobes;
    bg_instr instr[BG_NROLES];
} bg_seq;

/* Read and check the sequence file 'path' (format: docs/sequence-file.md).  Every problem is
** BG_EINVAL "PATH:LINE: ..." (or "PATH: section [S]: ..." for a key that is missing): an
** unknown section or key, a key given twice, an empty value, a value that does not parse, a
** setpoint or the safe setpoint outside the medium's limits.  A file that cannot be read is
** BG_ENOENT.  Free with bg_seq_release. */
BG_API int bg_seq_load(const char *path, bg_seq *out, bg_error *err);
BG_API void bg_seq_release(bg_seq *seq);

/* ---- SCPI over a transport ---- */

typedef struct bg_scpi bg_scpi;
/* Connect to instrument 'in' playing role 'role'. Failure is BG_EUNAVAIL naming it. */
BG_API int bg_scpi_open(const bg_instr *in, bg_role role, bg_scpi **out, bg_error *err);
BG_API void bg_scpi_close(bg_scpi *s);
/* Send 'cmd' (a newline is added) and, when it ends in '?', read one reply line into 'reply'
** (the terminator removed); then ask "SYST:ERR?" and fail unless it answers 0 (no error).
** A reply that does not come within the timeout, a closed connection, a reply with control
** characters or invalid UTF-8, and an instrument error are BG_EUNAVAIL with the
** command and what came back.  'reply' may be NULL for a command. */
BG_API int bg_scpi_cmd(bg_scpi *s, const char *cmd, char *reply, size_t size, bg_error *err);
/* The same, and the reply read as one finite number into '*v'. */
BG_API int bg_scpi_number(bg_scpi *s, const char *cmd, double *v, char *reply, size_t size,
                          bg_error *err);

/* ---- stability ---- */

/* The least-squares line through (t[i], v[i]), i < n (n >= 3): its slope and the scatter, the
** standard deviation of the residuals about it with n - 2 degrees of freedom.  BG_EINVAL for
** fewer than 3 points or times that are all equal. */
BG_API int bg_settle_line(const double *t, const double *v, size_t n, double *slope,
                          double *scatter, bg_error *err);

/* ---- what the database keeps of a sequence (store.c; SQLite backend in sqlite_run.c) ---- */

typedef struct bg_seq_head {
    long long id;
    char file[BG_NOTE], sha256[65], started_at[BG_TIME];
    char idn[BG_NOTE];      /* the *IDN? replies, "role: reply" joined by "; " */
    char criterion[BG_NOTE]; /* the stability criterion as text */
    int finished;
} bg_seq_head;

/* A setpoint's settling: 'settled' 1 when accepted, 0 when its time limit passed. */
typedef struct bg_seq_settle {
    size_t sp;              /* setpoint index, from 0 */
    double setpoint_k, slope_k_s, scatter_k, mean_k, window_s, waited_s;
    size_t samples;
    int settled;
    char at[BG_TIME];
} bg_seq_settle;

/* One reading as it was taken. */
typedef struct bg_seq_reading {
    long long id;
    size_t sp, ch, k;       /* setpoint index, probe index, reading number (from 1) */
    double setpoint_k, r_ohm, ref_raw;
    char channel[32], time[BG_TIME];
    char meter_reply[256], ref_reply[256];
} bg_seq_reading;

BG_API int bg_store_seq_add(bg_store *st, const bg_seq *seq, const char *idn,
                            const char *criterion, long long *id, bg_error *err);
/* The newest sequence that has not finished; '*found' 0 when there is none. */
BG_API int bg_store_seq_unfinished(bg_store *st, bg_seq_head *out, int *found, bg_error *err);
BG_API int bg_store_seq_settle(bg_store *st, long long seq_id, const bg_seq_settle *s,
                               bg_error *err);
/* Commit one reading (its own transaction).  A second reading with the same setpoint,
** channel and number is refused by the database (BG_EINVAL). */
BG_API int bg_store_seq_reading(bg_store *st, long long seq_id, const bg_seq_reading *r,
                                bg_error *err);
typedef int (*bg_seq_reading_cb)(const bg_seq_reading *r, void *ctx);
typedef int (*bg_seq_settle_cb)(const bg_seq_settle *s, void *ctx);
BG_API int bg_store_seq_readings(bg_store *st, long long seq_id, bg_seq_reading_cb cb,
                                 void *ctx, bg_error *err);
BG_API int bg_store_seq_settles(bg_store *st, long long seq_id, bg_seq_settle_cb cb, void *ctx,
                                bg_error *err);
/* Mark the sequence finished with the runs it made (inside the caller's transaction). */
BG_API int bg_store_seq_end(bg_store *st, long long seq_id, long long first_run,
                            long long last_run, bg_error *err);

/* ---- the engine ---- */

enum bg_seq_phase { BG_SEQ_CONNECT, BG_SEQ_SETTLING, BG_SEQ_READING, BG_SEQ_SAFE,
                    BG_SEQ_FINISHED };

/* What the engine reports as it goes (for a live view or log lines). */
typedef struct bg_seq_status {
    enum bg_seq_phase phase;
    size_t sp, nsp;                     /* the setpoint (index) and how many */
    double setpoint_k, ref_k;           /* ref_k NaN: not read yet */
    int have_stats;                     /* slope and scatter over a whole window */
    double slope_k_s, scatter_k, phase_s; /* time in this phase */
    size_t taken, total;                /* readings */
    double to_go_s;                     /* estimate; NaN: none yet */
    const char *event;                  /* a line to log, or NULL (a view refresh) */
} bg_seq_status;

typedef struct bg_seq_hooks {
    /* Wait 's' seconds; nonzero when the user asked to stop. */
    int (*wait)(void *ctx, double s);
    /* A monotonic clock in seconds. */
    double (*now)(void *ctx);
    /* What is happening; may be NULL. */
    void (*show)(void *ctx, const bg_seq_status *s);
    void *ctx;
} bg_seq_hooks;

typedef struct bg_seq_result {
    long long seq_id;
    int resumed, finished;
    size_t taken, skipped;              /* readings taken now; setpoints left unsettled */
    long long first_run, last_run;      /* the runs made at the end (0: none) */
} bg_seq_result;

/* Run 'seq' against its instruments, recording into 'st'.  With 'resume', continue the newest
** unfinished sequence from its first setpoint not completed: refused (BG_EINVAL) when there is
** none, when the file's SHA-256 differs from the one recorded, or when an instrument's *IDN?
** reply does. Every reading is committed as it is taken; at the end each probe's readings
** become a run (the reference correction applied as an import does) and the sequence is
** marked finished, in one transaction.  A stop asked through the hooks, or a setpoint that
** does not settle when the file says stop, sets the bath to the safe setpoint and returns
** BG_ESTOPPED (resumable); a lost instrument returns BG_EUNAVAIL after trying the
** same.  The probes and the reference must be in the database and the reference not past its
** due date; that is checked before any instrument is touched. */
BG_API int bg_seq_run(bg_store *st, const bg_seq *seq, int resume, const bg_seq_hooks *h,
                      bg_seq_result *res, bg_error *err);

#endif
