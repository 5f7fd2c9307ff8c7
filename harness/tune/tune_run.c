/* A whole tuning run (tune_run.h).  The progress line names each candidate
 * and estimates the time left from the layers measured so far. */
#define _POSIX_C_SOURCE 200809L
#include "harness/tune/tune_run.h"

#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
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
#include "harness/tune/tradeoff.h"
#include "harness/report/report.h"

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

/* One run's state. */
typedef struct tune_state {
    const cph_tune_job *job;
    cph_tune_opts o;      /* job->opts with the seed and the flush size filled in */
    cph_machine m;
    int have_machine;
    cph_control ctl;      /* the fixed control timed in every round (control.h) */
    int have_ctl;
    cph_table_doc *doc;
    int exists;           /* job->out existed before the run */
    int counts[CPH_TABLE_MAX_THREADS];
    int nt;
    cp_cache_sizes caches;
    cph_progress pr;
    int nwork, done_work, measured_work, failures;
    double measured_seconds;
    cph_net_total nets[CPH_TABLE_MAX_THREADS][2]; /* per thread count x flip */
} tune_state;

/* The output checked, the machine, the thread counts, the memory check and
 * the table document; the exit code of a failure (reported), or -1. */
static int prepare(tune_state *t) {
    const cph_tune_job *job = t->job;
    const char *out = job->out;
    char msg[512];
    struct stat sb;
    t->exists = stat(out, &sb) == 0;
    if (t->exists && S_ISDIR(sb.st_mode)) {
        cph_err("tune: --out %s is a directory", out);
        return CPH_EXIT_USAGE;
    }
    /* Refuse an unwritable place before measuring anything. */
    if (cph_check_output_dir(out, msg, sizeof msg) != CP_OK) {
        cph_err("tune: --out %s: %s", out, msg);
        return CPH_EXIT_USAGE;
    }
    if (t->exists && !job->resume && !job->force) {
        cph_err("tune: %s exists: use --resume to complete it or --force to replace it", out);
        return CPH_EXIT_USAGE;
    }
    if (cph_machine_detect(&t->m, NULL, msg, sizeof msg) != CP_OK) {
        cph_err("tune: %s", msg);
        return CPH_EXIT_USAGE;
    }
    t->have_machine = 1;
    t->nt =
        cph_opt_threads_read("tune", job->threads, t->m.cores, t->counts, CPH_TABLE_MAX_THREADS);
    if (t->nt < 1) return CPH_EXIT_USAGE;
    int most = 1;
    for (int i = 0; i < t->nt; i++)
        if (t->counts[i] > most) most = t->counts[i];
    const uint64_t budget = job->max_memory ? job->max_memory
                                            : (uint64_t)t->m.memory_bytes / 100 *
                                                  CPH_MEM_DEFAULT_PERCENT;
    char mmsg[512];
    if (cph_mem_check_selection(job->sel, most, 1, budget, mmsg, sizeof mmsg) != CP_OK) {
        cph_err("tune: %s", mmsg);
        return CPH_EXIT_USAGE;
    }
    const cph_table_settings ts = settings(&t->o, t->counts, t->nt);
    const cp_status st = (t->exists && job->resume)
                             ? cph_table_doc_open(out, &t->m, &ts, &t->doc, msg, sizeof msg)
                             : cph_table_doc_new(&t->m, &ts, &t->doc, msg, sizeof msg);
    if (st != CP_OK) {
        cph_err("tune: %s", msg);
        return CPH_EXIT_USAGE;
    }
    if (t->exists && !job->resume) cph_table_doc_replaces(t->doc, out);
    if (t->o.timing.cold && t->o.timing.flush_bytes == 0)
        t->o.timing.flush_bytes = 2 * cph_machine_llc_total(&t->m);
    t->caches = cph_machine_caches(&t->m);
    if (cph_control_init(&t->ctl, t->m.avx512f, t->m.avx2 && t->m.fma) != CP_OK) {
        cph_err("tune: out of memory for the fixed control");
        return CPH_EXIT_USAGE;
    }
    t->have_ctl = 1;
    t->o.control = &t->ctl;
    return -1;
}

/* One layer x flip at one thread count: tuned, put in the table, the table
 * written.  Returns 0 to go on, 1 when interrupted, or the exit code of a
 * failed write (reported). */
static int tune_one(tune_state *t, const cph_layer *L, cp_flip flip, int threads,
                    const cp_exec *exec, cph_net_total *net) {
    const cph_selection *sel = t->job->sel;
    char msg[512];
    t->done_work++;
    if (t->job->resume && cph_table_doc_find(t->doc, &L->shape, flip, threads) == CPH_TABLE_SAME) {
        cph_progress_note(&t->pr, "[layer %d/%d] %s flip=%s threads=%d: already measured, kept",
                          t->done_work, t->nwork, L->name, cph_flip_word(flip), threads);
        return 0;
    }
    progress_ctx pc = {&t->pr, t->done_work, t->nwork,
                       t->measured_work ? t->measured_seconds / t->measured_work : -1.0,
                       t->nwork - t->done_work + 1};
    cp_table_entry e;
    cph_tune_report rep;
    char lname[96];
    snprintf(lname, sizeof lname, "%s flip=%s t=%d", L->name, cph_flip_word(flip), threads);
    const cph_tune_request rq = {&t->o, L, flip, threads, sel->algos, sel->nalgos,
                                 &t->caches, exec, &stop_requested, on_candidate, &pc};
    size_t s0, d0, s1, d1;
    cph_timing_totals(&s0, &d0);
    cp_status st = cph_tune_layer(&rq, &e, &rep, msg, sizeof msg);
    cph_timing_totals(&s1, &d1);
    if (rep.interrupted) {
        cph_tune_report_free(&rep);
        return 1;
    }
    t->measured_work++;
    t->measured_seconds += rep.seconds;
    if (st != CP_OK) {
        cph_progress_note(&t->pr, "[layer %d/%d] %s: %s", t->done_work, t->nwork, lname, msg);
        t->failures++;
        cph_tune_report_free(&rep);
        return 0;
    }
    char note[3][200];
    snprintf(note[0], sizeof note[0],
             "tried %d of %d planned candidates in %.1f s: %d raced, %d skipped by "
             "the budget, %d disqualified, %d failed, %d algorithms not applicable",
             rep.measured + rep.disqualified, rep.planned, rep.seconds, rep.measured,
             rep.skipped, rep.disqualified, rep.failed, rep.unsupported);
    snprintf(note[1], sizeof note[1], "race: %zu rounds of trials, %d dropped, ended by %s",
             rep.rounds, rep.dropped, rep.ended_by ? rep.ended_by : "-");
    snprintf(note[2], sizeof note[2],
             "preempted: %zu of %zu timed samples had a thread preempted by another task "
             "(a trial's median leaves them out when it has others)",
             d1 - d0, s1 - s0);
    const char *notes[3] = {note[0], note[1], note[2]};
    const char **cnotes = calloc(e.ncandidates ? e.ncandidates : 1, sizeof *cnotes);
    for (size_t i = 0; cnotes && i < e.ncandidates; i++) cnotes[i] = rep.candidate_notes[i];
    char control_what[128] = "";
    if (t->o.control) cph_control_describe(t->o.control, control_what, sizeof control_what);
    cph_entry_notes en = {cnotes, rep.planned, rep.measured, rep.skipped, rep.disqualified,
                          rep.failed, rep.unsupported, rep.seconds, notes, 3,
                          rep.control_fma, rep.control_gemm, rep.ncontrol, control_what};
    st = cph_table_doc_put(t->doc, &e, &en, msg, sizeof msg);
    free(cnotes);
    cph_tune_report_free(&rep);
    if (st == CP_OK) cph_tune_network_add(net, L, &e);
    if (st == CP_OK) st = cph_table_doc_write(t->doc, t->job->out, msg, sizeof msg);
    char pbuf[128];
    cp_params_format(e.algo, &e.params, pbuf, sizeof pbuf);
    if (st == CP_OK)
        cph_progress_note(&t->pr,
                          "[layer %d/%d] %s: %s%s%s%s %.3f ms, runner-up %s %+.1f %% %s (%zu rounds)",
                          t->done_work, t->nwork, lname, e.algo->name, pbuf[0] ? " (" : "", pbuf,
                          pbuf[0] ? ")" : "", e.timing.median * 1e3,
                          e.runner_up ? e.runner_up->name : "none", e.margin * 100.0,
                          e.margin_in_noise ? "in the noise" : "confident", rep.rounds);
    char trade[400];
    if (st == CP_OK && cph_tradeoff_line(&e, trade, sizeof trade))
        cph_progress_note(&t->pr, "[layer %d/%d] %s: %s", t->done_work, t->nwork, lname, trade);
    cph_tune_entry_free(&e);
    if (st != CP_OK) {
        cph_progress_done(&t->pr);
        cph_err("tune: %s", msg);
        return CPH_EXIT_USAGE;
    }
    return 0;
}

/* Every layer x flip at the ti-th thread count, on its own pinned pool; the
 * exit code of a failure (reported), or 0. */
static int tune_threads(tune_state *t, int ti) {
    const cph_selection *sel = t->job->sel;
    char msg[512] = "";
    cph_pool *pool = NULL;
    int pinned = 0;
    if (cph_pool_create(&t->m, t->counts[ti], &pool, &pinned, msg, sizeof msg) != CP_OK) {
        cph_err("tune: %s", msg);
        return CPH_EXIT_USAGE;
    }
    if (!pinned) cph_progress_note(&t->pr, "warning: threads not pinned: %s", msg);
    const cp_exec exec = cph_pool_exec(pool);
    int rc = 0;
    for (size_t li = 0; li < sel->layers.n && !stop_requested && !rc; li++)
        for (int mi = 0; mi < sel->nflips && !stop_requested && !rc; mi++) {
            rc = tune_one(t, &sel->layers.v[li], sel->flips[mi], t->counts[ti], &exec,
                          &t->nets[ti][mi]);
            if (rc == 1) rc = 0; /* interrupted: stop_requested is set */
        }
    cph_pool_destroy(pool);
    return rc;
}

/* The table just written, one line per entry and the totals, on stdout
 * (harness/report/report_summary.c); the counts from the layer list. */
static void print_summary(const tune_state *t) {
    char msg[512];
    cph_report r;
    const char *path = t->job->out;
    if (cph_report_collect(&path, 1, &r, msg, sizeof msg) != CP_OK) {
        cph_warn("tune: no summary: %s", msg);
        return;
    }
    for (size_t i = 0; i < t->job->sel->layers.n; i++)
        cph_rep_set_count(&r, &t->job->sel->layers.v[i].shape, t->job->sel->layers.v[i].count);
    cph_rep_summary(stdout, &r);
    cph_report_free(&r);
}

int cph_tune_run(const cph_tune_job *job) {
    tune_state *t = calloc(1, sizeof *t);
    if (!t) {
        cph_err("tune: out of memory");
        return CPH_EXIT_FAIL;
    }
    t->job = job;
    t->o = job->opts;
    t->o.seed = job->sel->seed;
    stop_requested = 0;
    int rc = prepare(t);
    if (rc < 0) {
        struct sigaction sa;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_signal;
        sigemptyset(&sa.sa_mask);
        sigaction(SIGINT, &sa, NULL);
        sigaction(SIGTERM, &sa, NULL);
        cph_progress_init(&t->pr, stderr, job->quiet);
        t->nwork = (int)job->sel->layers.n * job->sel->nflips * t->nt;
        for (int ti = 0; ti < t->nt; ti++)
            for (int mi = 0; mi < job->sel->nflips && mi < 2; mi++)
                cph_net_init(&t->nets[ti][mi], job->sel->flips[mi], t->counts[ti],
                             job->sel->layers.n, cph_layers_total(&job->sel->layers));
        rc = CPH_EXIT_OK;
        for (int ti = 0; ti < t->nt && !stop_requested && rc == CPH_EXIT_OK; ti++)
            rc = tune_threads(t, ti);
        cph_progress_done(&t->pr);
        if (rc == CPH_EXIT_OK && job->sel->layers.n == 0) {
            /* an empty shard (tune --shard with more shards than shapes):
             * its table is written all the same, for the gather */
            char msg[512];
            if (cph_table_doc_write(t->doc, job->out, msg, sizeof msg) != CP_OK) {
                cph_err("tune: %s", msg);
                rc = CPH_EXIT_USAGE;
            }
        }
        if (rc == CPH_EXIT_OK && stop_requested) {
            fprintf(stderr, "convpick tune: interrupted; %s holds %zu finished entries (--resume "
                            "completes it)\n", job->out, cph_table_doc_count(t->doc));
            rc = 130;
        }
        if (rc == CPH_EXIT_OK) {
            if (!job->quiet)
                fprintf(stderr, "convpick tune: wrote %s (%zu entries)\n", job->out,
                        cph_table_doc_count(t->doc));
            /* the table's summary, its network totals included */
            print_summary(t);
            if (t->failures) rc = CPH_EXIT_FAIL;
        } else {
            /* No summary of a table left unfinished: what the network cost
             * so far, from the entries measured. */
            for (int ti = 0; ti < t->nt; ti++)
                for (int mi = 0; mi < job->sel->nflips && mi < 2; mi++)
                    cph_net_print(stdout, &t->nets[ti][mi]);
        }
    }
    if (t->doc) cph_table_doc_free(t->doc);
    if (t->have_ctl) cph_control_free(&t->ctl);
    if (t->have_machine) cph_machine_free(&t->m);
    free(t);
    return rc;
}
