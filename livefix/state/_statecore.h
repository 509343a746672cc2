/* livefix.state._statecore: the declarations its source files share (private to the module).
 *
 * The module is built from _statecore.c (the EpochCore type and the module), _statecore_line.c
 * (on_sentence's prelude: dispatch and the open epoch's bookkeeping), _statecore_add.c (the
 * per-type handlers of livefix/state/model.py and a C twin of used.solution_gsa),
 * _statecore_close.c (_close: one Epoch from the open epoch) and _statecore_used.c (the open
 * epoch's used set). Everything shared between them has the st_ prefix (or is a type or a static
 * inline helper) and hidden visibility, so the extension exports nothing but its init.
 */
#ifndef LIVEFIX_STATECORE_H
#define LIVEFIX_STATECORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stdint.h>
#include "../_corekit.h"

#if defined(__GNUC__) && !defined(_WIN32)
#define ST_HIDDEN __attribute__((visibility("hidden")))
#else
#define ST_HIDDEN
#endif

#define MAX_SENTENCES 64     /* livefix.state.model.MAX_SENTENCES */
#define UNTIMED_GAP_S 2.0    /* livefix.state.model.UNTIMED_GAP_S */
#define HALF_DAY_S 43200.0   /* livefix.state.model._HALF_DAY */
#define KNOT_MPS (1852.0 / 3600.0) /* livefix.state.model.KNOT_MPS, the same division */
#define ST_KINDS 16          /* msg ids whose dispatch is remembered (a receiver sends a handful) */
#define MAX_GSA_SEQ 16       /* GSA lines of an epoch remembered for the used set's reuse (one per system) */
#define GSA_PICKS 8          /* solution_gsa answers remembered (three or so pairs an epoch) */

/* A timed sentence's key (talker + msg id): the two strings when both are exact str (the
 * concatenation is then never made), else the concatenation itself in `key`. */
typedef struct { PyObject *talker, *mid, *key; } Key;

/* The model module's helpers (handed over by livefix/state/model_native.py, in this order), then
 * the model's collaborators and their bound methods (fetched from the model's dict when first used
 * and again whenever the model holds another collaborator: st_method, st_collab). */
enum {
    C_SOLUTION_GSA, C_QUALITY, C_DATUM, C_TOD_OF, C_MAKE_EPOCH, C_DATE, C_ONE_DAY, C_TIMED, C_DECODED, C_TRACKERS,
    NHELP,
    C_GSV = NHELP, C_GSA, C_SKY, C_CLOCK,
    C_GSV_ADD, C_GSA_ADD, C_GSA_NOTE, C_GSA_CLOSE, C_SKY_REPLACE, C_SKY_EXPIRE, C_SKY_IN_VIEW, C_SKY_OBS,
    C_CLOCK_RESOLVE, NCALL
};

typedef struct {
    PyObject_HEAD
    PyObject *model, *dict;      /* the model and its __dict__, where the attributes it publishes are written */
    PyObject *call[NCALL];
    Py_ssize_t off[4];           /* slots of Decoded: talker, msg_id, fields, proprietary */
    PyObject *tod_of;            /* the last time-of-fix object seen (model._tod_of) */
    int has_tod, has_closed, has_ahead, busy;
    double tod, closed_tod, ahead_t; /* model._tod, ._closed_tod, ._gst_ahead[0] */
    PyObject *ahead_f;           /* model._gst_ahead[1] */
    PyObject *used, *used_sorted; /* model._used, ._used_sorted */
    /* the open epoch (model._Open) */
    int open, o_has_tod, o_has_date_tod, nsent;
    double o_tod, o_date_tod;
    PyObject *o_mono, *o_wall, *o_by_type, *o_used, *o_date; /* o_used NULL: not made yet (see below) */
    /* The used set's reuse (st_join_used, st_take_used, st_keep_used). At 1-20 Hz the GSA lines repeat
     * epoch after epoch and the tracker hands back the very same placed tuples, so the epoch's set
     * would be built again, element by element, equal to the last one. While an epoch's placed
     * tuples are, one by one, the objects the previous epoch joined, its set is not made; if all of
     * them are, the previous epoch's set object is handed to the tracker again. That is exact when
     * the set holds just the union of those tuples: only this core holds it (refcount 1), the
     * tracker's close() added nothing to it (its size then), and the tracker is of a class that
     * never takes elements out (C_TRACKERS). Otherwise the set is made from the remembered tuples,
     * in their order, as the reference made it. */
    PyObject *gsa_seq[MAX_GSA_SEQ], *gsa_prev[MAX_GSA_SEQ]; /* owned */
    int gsa_n, gsa_prev_n; /* tuples joined this epoch (may pass MAX_GSA_SEQ: not remembered) / last epoch (-1: none) */
    PyObject *prev_used;   /* the last epoch's set (owned) or NULL */
    Py_ssize_t prev_used_len;
    unsigned long long used_reused; /* epochs given the previous set (tests) */
    /* solution_gsa(had, f) answered by the identity of the pair: kept only when both are sealed
     * read-only mappings (a mappingproxy whose dict nothing else holds, as the decoder hands a
     * cached line on: their values can never change) and the values the answer read are plain,
     * so asking again would give the same one of the two. The pair is held (ids stay unique). */
    struct { PyObject *had, *f; int pick_f; } picks[GSA_PICKS];
    int picks_next;
    unsigned long long picks_hit; /* answers given from here (tests) */
    Key *keys;
    Py_ssize_t nkeys, keys_cap;
    PyObject *sent[MAX_SENTENCES];
    /* Stamps of the model's dict (livefix/_corekit.h, kit_dict_stamp; 0: none): while the dict has
     * stamp mw_stamp it holds mw_mono and mw_wall (borrowed) as _mono and _wall, so rewriting them
     * is skipped; while it has cstamp[i], it holds call[C_GSV + i] as that collaborator. */
    uint64_t mw_stamp, cstamp[4];
    PyObject *mw_mono, *mw_wall;
    Py_ssize_t unknown_at; /* call[C_GSV]'s last_unknown as a plain object member: its offset (0: GetAttr) */
    /* on_sentence's dispatch of the msg ids seen (exact str, owned): a pure function of the text,
     * since TIMED is a frozenset and the handler table fixed */
    int nkinds;
    struct { PyObject *mid; signed char timed, txt, kind; } kinds[ST_KINDS];
} Core;

/* interned names (_statecore_line.c, set once by the module init) */
ST_HIDDEN extern PyObject *st_s_get, *st_s_time, *st_s_lat, *st_s_lon, *st_s_GSA, *st_s_GST, *st_s_GGA,
    *st_s_GNS, *st_s_RMC, *st_s_GLL, *st_s_VTG, *st_s_DTM, *st_s_late, *st_s_gsv_unreported,
    *st_s_last_unknown, *st_s_GSV, *st_s_gst_ahead, *st_s_mono;

/* f.get(name): a new reference */
static inline PyObject *st_get(PyObject *f, PyObject *name)
{
    PyObject *d = NULL;
    if (PyDict_CheckExact(f)) d = f;
    else if (Py_IS_TYPE(f, &PyDictProxy_Type)) d = kit_plain_dict(f);
    return kit_field(d, f, name, NULL, st_s_get);
}

/* _statecore_line.c: on_sentence's prelude (the model's on_sentence); a new reference */
ST_HIDDEN int st_line_init(void); /* interned names, the datetime C API: once, from the module init */
ST_HIDDEN PyObject *st_on_sentence(Core *s, PyObject *msg, PyObject *mono, PyObject *wall);
ST_HIDDEN PyObject *st_attr(Core *s, PyObject *msg, int k); /* 0 talker, 1 msg_id, 2 fields, 3 proprietary */
ST_HIDDEN int st_is_date(PyObject *d); /* isinstance(d, datetime.date) */

/* _statecore.c: the model's current collaborator obj (C_GSV ...) or one of its bound methods
 * (C_GSV_ADD ...), borrowed; NULL on error. model.<name>(*args), looked up as the reference does. */
ST_HIDDEN PyObject *st_collab(Core *s, int obj);
ST_HIDDEN PyObject *st_method(Core *s, int m);
ST_HIDDEN PyObject *st_call_model(Core *s, const char *name, PyObject *const *args, size_t n);

/* seconds of day of a datetime.time (model._tod_of): 1 and *out, 0 for anything else, -1 error */
ST_HIDDEN int st_tod_of(Core *s, PyObject *t, double *out);
/* model.<name> += 1 in the model's dict */
ST_HIDDEN int st_count(Core *s, PyObject *name);
/* model._gst_ahead written back from the C state */
ST_HIDDEN int st_put_ahead(Core *s);

/* _statecore_add.c: the handlers; 0 or -1 with an error set */
ST_HIDDEN int st_add_init(void);
ST_HIDDEN int st_on_fix(Core *s, PyObject *mid, PyObject *f);
ST_HIDDEN int st_on_dated(Core *s, PyObject *msg, PyObject *mid, int rmc);
ST_HIDDEN int st_on_gst(Core *s, PyObject *msg);
ST_HIDDEN int st_on_gsa(Core *s, PyObject *msg);
ST_HIDDEN int st_on_gsv(Core *s, PyObject *msg, PyObject *mono, PyObject *wall);

/* _statecore_used.c: op.used.update(placed), made or deferred; 0 or -1 with an error set */
ST_HIDDEN int st_join_used(Core *s, PyObject *placed);
/* op.used for _close, a new reference: the set made, the previous epoch's set when it may serve, or one
 * made now from the remembered tuples; NULL with an error set */
ST_HIDDEN PyObject *st_take_used(Core *s);
/* after the tracker's close(used) (len: the set's size handed over): remember used and the epoch's n
 * tuples (seq; those kept are moved out) for the next epoch when the set may serve again */
ST_HIDDEN int st_keep_used(Core *s, PyObject *used, Py_ssize_t len, PyObject **seq, int n);
/* _statecore_close.c: model._close(); a new Epoch */
ST_HIDDEN int st_close_init(void);
ST_HIDDEN PyObject *st_close(Core *s);
ST_HIDDEN void st_open_clear(Core *s);
ST_HIDDEN void st_used_forget(Core *s); /* no previous set to reuse */
ST_HIDDEN void st_picks_clear(Core *s); /* _statecore_add.c: forget solution_gsa's answers */

#endif
