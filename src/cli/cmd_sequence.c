/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* bandgap sequence: drive the bath, scanner, meter and reference through a sequence file and
** record every reading as it is taken (bench.h); or check a sequence file. */
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"

static const char sequence_usage[] =
    "Usage: bandgap sequence run FILE [--resume]\n"
    "       bandgap sequence check FILE\n"
    "Run the calibration sequence in FILE (an INI file, docs/sequence-file.md): for each\n"
    "setpoint in order, set the bath, wait until the reference settles (drift and scatter\n"
    "over a moving window below the file's limits), then read every probe through the\n"
    "scanner; each reading is committed to the database as it is taken.  At the end each\n"
    "probe's readings become a calibration run (corrected through the reference as an\n"
    "import is), ready for 'bandgap fit'.  Setpoints outside the medium's limits are refused\n"
    "before any instrument is touched.  Ctrl-C stops cleanly: the bath goes to the file's\n"
    "safe setpoint and --resume continues from the first setpoint not completed (refused when\n"
    "the file or an instrument's *IDN? changed).  A lost instrument stops the sequence the\n"
    "same way.  'check' reads the file and prints what it asks, touching nothing.\n"
    "Exit status: 65 bad file or refused, 69 an instrument failed, 75 stopped (resumable).\n"
    "Caution: a bath may hold hot oil or a cryogenic medium.  The limits in the file are a\n"
    "check of the file, not a safety system: the bath's own protection, local safety rules\n"
    "and accredited practice govern its use; stay with a bath that is running.\n";

/* What the hooks share: the signals that stop, the terminal, the last line shown. */
struct seq_view {
    sigset_t stop;
    int tty, line_open;
    size_t last_taken;
    double t0;
};

static double seq_mono(void *ctx)
{
    struct timespec ts;
    (void)ctx;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Wait 's' seconds unless SIGINT or SIGTERM (blocked, so they wait for us) arrives. */
static int seq_wait(void *ctx, double s)
{
    struct seq_view *v = ctx;
    struct timespec ts;
    siginfo_t info;
    if (s < 0.0)
        s = 0.0;
    ts.tv_sec = (time_t)s;
    ts.tv_nsec = (long)((s - (double)ts.tv_sec) * 1e9);
    for (;;) {
        int sig = sigtimedwait(&v->stop, &info, &ts);
        if (sig > 0)
            return 1;
        /* EAGAIN: the time passed; EINTR: another signal, good enough to go on */
        return 0;
    }
}

static void seq_clear_line(struct seq_view *v)
{
    if (v->line_open) {
        fflush(stderr);
        dprintf(STDERR_FILENO, "\r\033[K");
        v->line_open = 0;
    }
}

static const char *phase_name(enum bg_seq_phase p)
{
    switch (p) {
    case BG_SEQ_CONNECT: return "connecting";
    case BG_SEQ_SETTLING: return "settling";
    case BG_SEQ_READING: return "reading";
    case BG_SEQ_SAFE: return "to safe setpoint";
    default: return "finished";
    }
}

/* The live line: setpoint, settling state with drift and scatter, readings, time to go. */
static void seq_live(struct seq_view *v, const bg_seq_status *s)
{
    char sp[48], ref[48] = "-", stats[96] = "", togo[48] = "";
    bg_units_format_temp(s->setpoint_k, BG_UNIT_C, 2, sp, sizeof sp);
    if (!isnan(s->ref_k))
        bg_units_format_temp(s->ref_k, BG_UNIT_C, 3, ref, sizeof ref);
    if (s->phase == BG_SEQ_SETTLING)
        snprintf(stats, sizeof stats, " %.0f s; drift %s; scatter %s", s->phase_s,
                 s->have_stats ? "" : "(window filling)", "");
    if (s->phase == BG_SEQ_SETTLING && s->have_stats)
        snprintf(stats, sizeof stats, " %.0f s; drift %.4g mK/min; scatter %.4g mK",
                 s->phase_s, s->slope_k_s * 60e3, s->scatter_k * 1e3);
    if (!isnan(s->to_go_s))
        snprintf(togo, sizeof togo, "; ~%.0f min to go", ceil(s->to_go_s / 60.0));
    fflush(stderr);
    dprintf(STDERR_FILENO, "\r\033[Ksetpoint %zu/%zu %s: %s%s; reference %s; readings "
            "%zu/%zu%s", s->sp + 1, s->nsp, sp, phase_name(s->phase), stats, ref, s->taken,
            s->total, togo);
    v->line_open = 1;
}

static void seq_show(void *ctx, const bg_seq_status *s)
{
    struct seq_view *v = ctx;
    if (s->event) {
        seq_clear_line(v);
        fprintf(stderr, "bandgap: sequence: [%6.1f s] %s\n", seq_mono(NULL) - v->t0, s->event);
        fflush(stderr);
    }
    if (v->tty) {
        if (!s->event)
            seq_live(v, s);
    } else if (!s->event && s->phase == BG_SEQ_READING && s->taken != v->last_taken) {
        char ref[48] = "-";
        if (!isnan(s->ref_k))
            bg_units_format_temp(s->ref_k, BG_UNIT_C, 3, ref, sizeof ref);
        fprintf(stderr, "bandgap: sequence: [%6.1f s] reading %zu/%zu at setpoint %zu "
                "(reference %s)\n", seq_mono(NULL) - v->t0, s->taken, s->total, s->sp + 1,
                ref);
    }
    v->last_taken = s->taken;
}

static void seq_print_check(const bg_seq *q)
{
    char a[48], b[48], c[48];
    printf("sequence file %s (SHA-256 %s)\n", q->path, q->sha256);
    printf("medium %s: limits %s to %s, safe setpoint %s\n", q->medium,
           bg_units_format_temp(q->min_k, BG_UNIT_C, 2, a, sizeof a),
           bg_units_format_temp(q->max_k, BG_UNIT_C, 2, b, sizeof b),
           bg_units_format_temp(q->safe_k, BG_UNIT_C, 2, c, sizeof c));
    printf("setpoints:");
    for (size_t i = 0; i < q->nsp; i++)
        printf("%s %s", i ? "," : "", bg_units_format_temp(q->setpoint_k[i], BG_UNIT_C, 2, a,
                                                          sizeof a));
    printf("\n%zu readings per setpoint and probe; %zu probes:", q->readings, q->nprobes);
    for (size_t i = 0; i < q->nprobes; i++)
        printf("%s %s on channel %s", i ? "," : "", q->probes[i].serial, q->probes[i].channel);
    printf("\nreference %s (readout in %s)\n", q->ref_ident,
           q->ref_ohms ? "ohm" : bg_units_symbol(q->ref_unit, 1));
    printf("settled when over %g s |drift| <= %g mK/min and scatter <= %g mK (a reading "
           "every %g s); time limit %g s, then %s\n", q->window_s, q->max_drift_k_s * 60e3,
           q->max_scatter_k * 1e3, q->sample_s, q->time_limit_s,
           q->stop_on_timeout ? "stop" : "skip the setpoint");
    for (int r = 0; r < BG_NROLES; r++) {
        const bg_instr *in = &q->instr[r];
        printf("%-9s ", bg_role_name((bg_role)r));
        if (in->transport == BG_TR_TCP)
            printf("tcp %s:%d", in->host, in->port);
        else
            printf("%s %s", in->transport == BG_TR_SERIAL ? "serial" : "usbtmc", in->device);
        printf(", timeout %g s: '%s'%s%s%s\n", in->timeout_s, in->cmd[0], in->cmd[1][0] ?
               ", '" : "", in->cmd[1], in->cmd[1][0] ? "'" : "");
    }
}

static void seq_print_result(const bg_seq_result *r, const bg_seq *q, int json)
{
    if (json) {
        json_out j;
        json_begin(&j, stdout);
        json_obj(&j, NULL);
        json_int(&j, "sequence", r->seq_id);
        json_int(&j, "resumed", r->resumed);
        json_int(&j, "readings_taken", (long long)r->taken);
        json_int(&j, "setpoints_skipped", (long long)r->skipped);
        json_int(&j, "first_run", r->first_run);
        json_int(&j, "last_run", r->last_run);
        json_obj_end(&j);
        json_end(&j);
        return;
    }
    printf("sequence %lld finished%s: %zu readings taken now; %zu setpoint%s skipped; runs "
           "%lld to %lld, one per probe (%zu probes)\n", r->seq_id, r->resumed ? " (resumed)"
           : "", r->taken, r->skipped, r->skipped == 1 ? "" : "s", r->first_run, r->last_run,
           q->nprobes);
}

static int seq_run(struct cli_ctx *ctx, const char *path, int resume)
{
    bg_error err = BG_ERROR_INIT;
    bg_store *st = NULL;
    bg_seq q;
    bg_seq_result res;
    struct seq_view v;
    const char *term = getenv("TERM");
    int rc;
    if ((rc = bg_seq_load(path, &q, &err)) != BG_OK)
        return cli_fail(NULL, &err);
    if ((rc = cli_open_store(ctx, 0, &st)) != BG_OK) {
        bg_seq_release(&q);
        return rc;
    }
    memset(&v, 0, sizeof v);
    sigemptyset(&v.stop);
    sigaddset(&v.stop, SIGINT);
    sigaddset(&v.stop, SIGTERM);
    sigprocmask(SIG_BLOCK, &v.stop, NULL);
    v.tty = isatty(STDERR_FILENO) && !(term && strcmp(term, "dumb") == 0);
    v.t0 = seq_mono(NULL);
    cli_warn("sequence: caution: the bath may hold hot oil or a cryogenic medium; the limits "
             "in the file are checked, but this program does not make the bath safe: follow "
             "local safety rules and accredited practice, and stay with the bath");
    bg_seq_hooks h = { seq_wait, seq_mono, seq_show, &v };
    rc = bg_seq_run(st, &q, resume, &h, &res, &err);
    seq_clear_line(&v);
    if (rc != BG_OK) {
        cli_fail("sequence", &err);
        if (res.seq_id && (rc == BG_ESTOPPED || rc == BG_EUNAVAIL))
            cli_error("sequence %lld is kept with its %zu readings taken now; continue it "
                      "with 'bandgap sequence run %s --resume'", res.seq_id, res.taken, path);
    } else
        seq_print_result(&res, &q, ctx->json);
    bg_store_close(st);
    bg_seq_release(&q);
    return rc;
}

int cmd_sequence(int argc, char **argv, struct cli_ctx *ctx)
{
    static const struct option opts[] = {
        { "resume", no_argument, NULL, 'r' }, { "json", no_argument, NULL, 'j' },
        { "help", no_argument, NULL, 'h' }, { NULL, 0, NULL, 0 },
    };
    int c, resume = 0;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":h", opts, NULL)) != -1) {
        switch (c) {
        case 'h': fputs(sequence_usage, stdout); return BG_OK;
        case 'r': resume = 1; break;
        case 'j': ctx->json = 1; break;
        case ':': return cli_usage_error("sequence", "option '%s' needs a value",
                                         argv[optind - 1]);
        default: return cli_unknown_option("sequence", argv[optind - 1], opts);
        }
    }
    if (optind + 2 != argc || (strcmp(argv[optind], "run") != 0 &&
                               strcmp(argv[optind], "check") != 0))
        return cli_usage_error("sequence", "expected 'run FILE' or 'check FILE'");
    if (strcmp(argv[optind], "check") == 0) {
        bg_error err = BG_ERROR_INIT;
        bg_seq q;
        if (resume)
            return cli_usage_error("sequence", "--resume goes with 'run'");
        if (bg_seq_load(argv[optind + 1], &q, &err) != BG_OK)
            return cli_fail(NULL, &err);
        seq_print_check(&q);
        bg_seq_release(&q);
        return BG_OK;
    }
    return seq_run(ctx, argv[optind + 1], resume);
}
