/* A whole tuning run (tune_run.h).  The progress line names each candidate
 * and estimates the time left from the layers measured so far. */
#define _POSIX_C_SOURCE 200809L
#include "harness/tune/tune_run.h"

#include <signal.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/io/rawfile.h"
#include "harness/io/table_write.h"
#include "harness/machine/machine.h"
#include "harness/machine/membudget.h"
#include "harness/machine/pool.h"
#include "harness/measure/progress.h"

static volatile sig_atomic_t stop_requested = 0;

static void on_signal(int sig) {
    (void)sig;
    stop_requested = 1;
}

typedef struct {
    cph_progress *pr;
    int layer_i, nlayers;
    double eta_per_layer;
    int left_layers;
} progress_ctx;

static void on_candidate(void *arg, const cph_tune_progress *p) {
    progress_ctx *c = arg;
    char text[256];
    snprintf(text, sizeof text, "candidate %d/%d %s%s%s%s", p->candidate, p->ncandidates, p->algo,
             p->params[0] ? " (" : "", p->params, p->params[0] ? ")" : "");
    double left = c->eta_per_layer > 0 ? c->eta_per_layer * c->left_layers : -1.0;
    cph_progress_line(c->pr, c->layer_i, c->nlayers, p->layer, text, left);
}

/* The table's record of how it was measured. */
static cph_table_settings settings(const cph_tune_opts *o, const int *counts, int nt) {
    cph_table_settings ts;
    memset(&ts, 0, sizeof ts);
    ts.target_rel_ci = o->timing.target_rel_ci;
    ts.confidence = o->timing.confidence;
    ts.max_seconds = o->timing.max_seconds;
    ts.cold = o->timing.cold;
    ts.warmup = o->timing.warmup;
    ts.min_samples = o->timing.min_samples;
    ts.max_samples = o->timing.max_samples;
    ts.max_rel_err = o->max_rel_err;
    ts.budget_seconds = o->budget_seconds;
    ts.max_candidates = o->max_candidates;
    ts.seed = o->seed;
    for (int i = 0; i < nt; i++) ts.threads[i] = counts[i];
    ts.nthreads = nt;
    return ts;
}

int cph_tune_run(const cph_tune_job *job) {
    const cph_selection sel = *job->sel;
    cph_tune_opts o = job->opts;
    const char *out = job->out;
    const int resume = job->resume, force = job->force, quiet = job->quiet;
    const uint64_t budget = job->max_memory;
    int rc = CPH_EXIT_USAGE;
    char msg[512];
    cph_machine m;
    int have_machine = 0;
    cph_table_doc *doc = NULL;
    stop_requested = 0;
    o.seed = sel.seed;
    struct stat sb;
    const int exists = stat(out, &sb) == 0;
    if (exists && S_ISDIR(sb.st_mode)) {
        cph_err("tune: --out %s is a directory", out);
        goto done;
    }
    /* Refuse an unwritable place before measuring anything. */
    if (cph_check_output_dir(out, msg, sizeof msg) != CP_OK) {
        cph_err("tune: --out %s: %s", out, msg);
        goto done;
    }
    if (exists && !resume && !force) {
        cph_err("tune: %s exists: use --resume to complete it or --force to replace it", out);
        goto done;
    }
    if (cph_machine_detect(&m, NULL, msg, sizeof msg) != CP_OK) {
        cph_err("tune: %s", msg);
        goto done;
    }
    have_machine = 1;
    int counts[CPH_TABLE_MAX_THREADS];
    const int nt = cph_opt_threads_read("tune", job->threads, m.cores, counts, CPH_TABLE_MAX_THREADS);
    if (nt < 1) goto done;
    int most = 1;
    for (int i = 0; i < nt; i++)
        if (counts[i] > most) most = counts[i];
    if (cph_mem_check_selection("tune", &sel, most, 1,
                                budget ? budget : (uint64_t)m.memory_bytes / 100 *
                                                      CPH_MEM_DEFAULT_PERCENT) != 0)
        goto done;
    const cph_table_settings ts = settings(&o, counts, nt);
    cp_status st = (exists && resume) ? cph_table_doc_open(out, &m, &ts, &doc, msg, sizeof msg)
                                      : cph_table_doc_new(&m, &ts, &doc, msg, sizeof msg);
    if (st != CP_OK) {
        cph_err("tune: %s", msg);
        goto done;
    }
    if (exists && !resume) cph_table_doc_replaces(doc, out);
    if (o.timing.cold && o.timing.flush_bytes == 0) o.timing.flush_bytes = 2 * cph_machine_llc_total(&m);
    const cp_cache_sizes caches = cph_machine_caches(&m);

    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);

    cph_progress pr;
    cph_progress_init(&pr, stderr, quiet);
    const int nwork = (int)sel.layers.n * sel.nflips * nt;
    int done_work = 0, measured_work = 0, failures = 0;
    double measured_seconds = 0.0;
    rc = CPH_EXIT_OK;
    for (int ti = 0; ti < nt && !stop_requested; ti++) {
        cph_pool *pool = NULL;
        int pinned = 0;
        if (cph_pool_create(&m, counts[ti], &pool, &pinned, msg, sizeof msg) != CP_OK) {
            cph_err("tune: %s", msg);
            rc = CPH_EXIT_USAGE;
            break;
        }
        if (!pinned) cph_progress_note(&pr, "warning: threads not pinned: %s", msg);
        cp_exec exec = cph_pool_exec(pool);
        for (size_t li = 0; li < sel.layers.n && !stop_requested; li++)
            for (int mi = 0; mi < sel.nflips && !stop_requested; mi++) {
                const cph_layer *L = &sel.layers.v[li];
                const cp_flip flip = sel.flips[mi];
                done_work++;
                if (resume && cph_table_doc_find(doc, &L->shape, flip, counts[ti]) == CPH_TABLE_SAME) {
                    cph_progress_note(&pr, "[layer %d/%d] %s flip=%s threads=%d: already measured, kept",
                                      done_work, nwork, L->name, cph_flip_word(flip),
                                      counts[ti]);
                    continue;
                }
                progress_ctx pc = {&pr, done_work, nwork,
                                   measured_work ? measured_seconds / measured_work : -1.0,
                                   nwork - done_work + 1};
                cp_table_entry e;
                cph_tune_report rep;
                char lname[96];
                snprintf(lname, sizeof lname, "%s flip=%s t=%d", L->name, cph_flip_word(flip),
                         counts[ti]);
                cph_layer named = *L;
                st = cph_tune_layer(&o, &named, flip, counts[ti], sel.algos, sel.nalgos, &caches,
                                    &exec, &stop_requested, on_candidate, &pc, &e, &rep, msg,
                                    sizeof msg);
                if (rep.interrupted) break;
                measured_work++;
                measured_seconds += rep.seconds;
                if (st != CP_OK) {
                    cph_progress_note(&pr, "[layer %d/%d] %s: %s", done_work, nwork, lname, msg);
                    failures++;
                    continue;
                }
                char note[160];
                snprintf(note, sizeof note,
                         "tried %d of %d planned candidates in %.1f s: %d measured, %d skipped by "
                         "the budget, %d disqualified, %d failed, %d algorithms not applicable",
                         rep.measured + rep.disqualified, rep.planned, rep.seconds, rep.measured,
                         rep.skipped, rep.disqualified, rep.failed, rep.unsupported);
                const char *notes[1] = {note};
                cph_entry_notes en = {NULL, rep.planned, rep.measured, rep.skipped,
                                      rep.disqualified, rep.failed, rep.unsupported, rep.seconds,
                                      notes, 1};
                st = cph_table_doc_put(doc, &e, &en, msg, sizeof msg);
                if (st == CP_OK) st = cph_table_doc_write(doc, out, msg, sizeof msg);
                char pbuf[128];
                cp_params_format(e.algo, &e.params, pbuf, sizeof pbuf);
                if (st == CP_OK)
                    cph_progress_note(&pr,
                                      "[layer %d/%d] %s: %s%s%s%s %.3f ms, runner-up %s %+.1f %%%s",
                                      done_work, nwork, lname, e.algo->name, pbuf[0] ? " (" : "",
                                      pbuf, pbuf[0] ? ")" : "", e.timing.median * 1e3,
                                      e.runner_up ? e.runner_up->name : "none", e.margin * 100.0,
                                      e.margin_in_noise ? " (in the noise)" : "");
                cph_tune_entry_free(&e);
                if (st != CP_OK) {
                    cph_progress_done(&pr);
                    cph_err("tune: %s", msg);
                    rc = CPH_EXIT_USAGE;
                    stop_requested = 1;
                }
            }
        cph_pool_destroy(pool);
    }
    cph_progress_done(&pr);
    if (rc == CPH_EXIT_OK && stop_requested) {
        fprintf(stderr, "convpick tune: interrupted; %s holds %zu finished entries (--resume "
                        "completes it)\n", out, cph_table_doc_count(doc));
        rc = 130;
    } else if (rc == CPH_EXIT_OK) {
        if (!quiet)
            fprintf(stderr, "convpick tune: wrote %s (%zu entries)\n", out, cph_table_doc_count(doc));
        if (failures) rc = CPH_EXIT_FAIL;
    }
done:
    if (doc) cph_table_doc_free(doc);
    if (have_machine) cph_machine_free(&m);
    return rc;
}
