/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The table of report kinds, rendering into memory, the head every stored report shares, and
** issuing: a report is generated inside the store's write transaction with its number, then
** stored as bytes and never changed (bg_store_artifact_issue). */
#include <stdlib.h>
#include <string.h>

#include "bandgap/bandgap.h"
#include "report/html_int.h"
#include "report/report_int.h"

/* The one list of report kinds: a new kind is one generator and one row here. */
static const bg_report_kind *const kinds[] = {
    &bgi_report_calib,
    &bgi_report_lot,
    &bgi_report_table,
};

const bg_report_kind *bg_report_kind_at(size_t i)
{
    return i < sizeof kinds / sizeof kinds[0] ? kinds[i] : NULL;
}

const bg_report_kind *bg_report_kind_find(const char *name)
{
    for (size_t i = 0; name && i < sizeof kinds / sizeof kinds[0]; i++)
        if (strcmp(kinds[i]->name, name) == 0)
            return kinds[i];
    return NULL;
}

int bg_report_render(const bg_report_kind *kind, const void *result, const bg_report_head *head,
                     char **html, size_t *len, bg_error *err)
{
    struct bgi_page page;
    *html = NULL, *len = 0;
    FILE *f = bgi_page_open(&page);
    if (!f)
        return bg_error_set(err, BG_ENOMEM, "out of memory for the report");
    int rc = kind->generate(result, head, f, err);
    if ((fclose(f) != 0 || page.oom) && rc == BG_OK)
        rc = bg_error_set(err, BG_ENOMEM, "out of memory for the report");
    if (rc != BG_OK) {
        free(page.buf);
        return rc;
    }
    *html = page.buf, *len = page.len;
    return rc;
}

void bgi_report_kv(FILE *f, const char *k, const char *v)
{
    fputs("<tr><th>", f);
    bgi_html_esc(f, k);
    fputs("</th><td>", f);
    bgi_html_esc(f, v && *v ? v : "not recorded");
    fputs("</td></tr>\n", f);
}

void bgi_report_begin(FILE *f, const bg_report_kind *k, const bg_report_head *h, char *rid,
                      size_t rid_size)
{
    snprintf(rid, rid_size, "%s-%06lld", k->id_prefix, h->id);
    bgi_html_begin(f, k->title, rid);
    fprintf(f, "<h1>");
    bgi_html_esc(f, k->title);
    fprintf(f, "</h1>\n<table class=\"kv\" id=\"identity\">\n");
    bgi_report_kv(f, "Report", rid);
    bgi_report_kv(f, "Issued", h->issued);
    if (h->replaces) {
        fprintf(f, "<tr><th>Replaces</th><td id=\"replaces\" data-v=\"%lld\">report %lld; "
                   "reason: ", h->replaces, h->replaces);
        bgi_html_esc(f, h->why);
        fputs("</td></tr>\n", f);
    }
    bgi_report_kv(f, "Laboratory", h->lab);
    if (h->customer)
        bgi_report_kv(f, "Customer", h->customer);
    char by[64];
    snprintf(by, sizeof by, "bandgap %s", bg_version());
    bgi_report_kv(f, "Issued by", by);
    if (h->chain) { /* the hash is the caller's text: escaped like any other */
        char hash[sizeof h->chain->hash];
        snprintf(hash, sizeof hash, "%.64s", h->chain->hash);
        fprintf(f, "<tr><th>Record chain</th><td id=\"chain\" data-records=\"%lld\" "
                   "data-head=\"", h->chain->records);
        bgi_html_esc(f, hash);
        fprintf(f, "\">issued on record %lld, head ", h->chain->records);
        bgi_html_esc(f, hash);
        fputs(" (bandgap verify checks it)</td></tr>\n", f);
    }
    fputs("</table>\n", f);
}

/* ---- issuing ---- */

/* What a report is made from, as JSON (malloc'd; NULL when out of memory): its subject and
** the lot, or the run, fit and probe. */
static char *report_spec(const char *subject, const char *lot, long long run, long long fit,
                         const char *probe)
{
    char *spec = NULL;
    size_t len = 0;
    FILE *sf = open_memstream(&spec, &len);
    if (!sf)
        return NULL;
    fputs("{\"subject\":", sf);
    bg_json_write_string(sf, subject);
    if (lot) {
        fputs(",\"lot\":", sf);
        bg_json_write_string(sf, lot);
    } else {
        fprintf(sf, ",\"run\":%lld,\"fit\":%lld,\"probe\":", run, fit);
        bg_json_write_string(sf, probe);
    }
    fputc('}', sf);
    if (fclose(sf) != 0) {
        free(spec);
        return NULL;
    }
    return spec;
}

struct issue_ctx {
    const bg_report_kind *kind;
    const void *result;
    const bg_report_opts *o;
};

static int issue_gen(long long id, const char *issued, const bg_chain_head *chain, void *vctx,
                     char **content, size_t *len, bg_error *err)
{
    const struct issue_ctx *c = vctx;
    bg_report_head h = { id, issued, c->o->lab, c->o->customer, c->o->replaces, c->o->why,
                         chain };
    return bg_report_render(c->kind, c->result, &h, content, len, err);
}

/* Generate and store one report; '*out' is the stored row. */
static int issue(bg_store *st, struct issue_ctx *c, const char *subject, long long fit_id,
                 const char *spec, bg_artifact *out, bg_error *err)
{
    long long id = 0;
    static const char *const name[3] = { "laboratory", "customer", "reason" };
    const char *text[3] = { c->o->lab, c->o->customer, c->o->why };
    if (!spec)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    for (int i = 0; i < 3; i++) {
        int rc = text[i] ? bg_text_check(name[i], text[i], strlen(text[i]), err) : BG_OK;
        if (rc != BG_OK)
            return rc;
    }
    /* the stored row comes back from the issue itself: its content is the bytes the store
    ** hashed into the record chain (read back from the table for the hash), not read again */
    bg_artifact_req req = { c->kind->artifact_kind, subject, fit_id, spec, c->o->replaces,
                            bg_version(), issue_gen, c, out };
    return bg_store_artifact_issue(st, &req, &id, err);
}

int bg_report_issue_run(bg_store *st, long long run_id, long long fit_id,
                        const bg_report_opts *o, bg_artifact *out, bg_error *err)
{
    bg_calib_report r = BG_CALIB_REPORT_INIT;
    char subject[64];
    memset(out, 0, sizeof *out);
    int rc = bg_calib_report_load(st, run_id, fit_id, o->dissipation_w_per_k, &r, err);
    if (rc == BG_OK) {
        snprintf(subject, sizeof subject, "run %lld", run_id);
        char *spec = report_spec(subject, NULL, run_id, r.fit.id, r.run.serial);
        struct issue_ctx c = { &bgi_report_calib, &r, o };
        rc = issue(st, &c, subject, r.fit.id, spec, out, err);
        free(spec);
    }
    bg_calib_report_release(&r);
    return rc;
}

int bg_report_issue_lot(bg_store *st, const char *code, const bg_report_opts *o,
                        bg_artifact *out, bg_error *err)
{
    bg_lot_report r;
    char subject[BG_TEXT + 8];
    memset(out, 0, sizeof *out);
    memset(&r, 0, sizeof r);
    int rc = bg_store_lot_get(st, code, &r.lot, err);
    if (rc == BG_OK) {
        /* the page is written while the lot is read, inside the issue's transaction: a lot
        ** of any size is never held whole */
        r.st = st, r.qa = o->qa;
        snprintf(subject, sizeof subject, "lot %s", code);
        char *spec = report_spec(subject, code, 0, 0, NULL);
        struct issue_ctx c = { &bgi_report_lot, &r, o };
        rc = issue(st, &c, subject, 0, spec, out, err);
        free(spec);
    }
    return rc;
}
