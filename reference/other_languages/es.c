/* A (1 + lambda) evolution strategy on the weights of a fixed network, in C99 with the
 * standard library only, speaking neuroyard's JSON-lines evolver protocol (README.md
 * beside this file). Build and run:
 *
 *     cc -O2 -std=c99 -o es reference/other_languages/es.c -lm
 *     neuroyard run --evolver process:./es --task xor-v2
 *
 * The network: inputs and a bias node feed `hidden` hidden nodes, which (with the bias)
 * feed the outputs, every node neat_sigmoid; with no hidden nodes the inputs and the bias
 * feed the outputs. The first parent's weights are uniform in [-init_range, init_range];
 * each generation tries `lambda` mutants of the parent (every weight plus a Gaussian step
 * of deviation `sigma`; the first generation holds the parent itself and lambda - 1
 * mutants), and the fittest replaces the parent when it is at least as fit: the algorithm
 * of neuroyard's hill-climber and of es.js.
 *
 * It reads the JSON it needs with the small strict parser below (RFC 8259: no trailing
 * commas, no NaN, nothing after the value, nesting at most MAX_DEPTH deep).
 */
#define _POSIX_C_SOURCE 200809L
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- a small strict JSON parser ------------------------------------------------------ */

enum kind { J_NULL, J_BOOL, J_NUMBER, J_STRING, J_ARRAY, J_OBJECT };

typedef struct value {
    enum kind kind;
    int truth;             /* J_BOOL */
    double number;         /* J_NUMBER */
    char *text;            /* J_STRING: the string; J_NUMBER: its literal */
    struct value **items;  /* J_ARRAY items, J_OBJECT member values */
    char **keys;           /* J_OBJECT member names */
    size_t count;
} value;

#define MAX_DEPTH 64
static const char *parse_error; /* why the last parse failed */

static value *parse_value(const char **p, int depth);

static void *grow(void *block, size_t count, size_t size) {
    void *out = realloc(block, (count + 1) * size);
    if (!out) { fputs("es: out of memory\n", stderr); exit(1); }
    return out;
}

static void release(value *v) {
    if (!v) return;
    for (size_t k = 0; k < v->count; k++) {
        release(v->items[k]);
        if (v->keys) free(v->keys[k]);
    }
    free(v->items);
    free(v->keys);
    free(v->text);
    free(v);
}

static value *fail(const char *why, value *partial) {
    parse_error = why;
    release(partial);
    return NULL;
}

static void skip_space(const char **p) {
    while (**p == ' ' || **p == '\t' || **p == '\n' || **p == '\r') (*p)++;
}

static int hex4(const char *s, unsigned *out) {
    *out = 0;
    for (int k = 0; k < 4; k++) {
        char c = s[k];
        unsigned d = c >= '0' && c <= '9' ? (unsigned)(c - '0')
                   : c >= 'a' && c <= 'f' ? (unsigned)(c - 'a' + 10)
                   : c >= 'A' && c <= 'F' ? (unsigned)(c - 'A' + 10) : 16u;
        if (d == 16u) return 0;
        *out = *out * 16 + d;
    }
    return 1;
}

static char *parse_string(const char **p) {  /* at the opening quote; NULL on error */
    const char *s = *p + 1, *end = s;
    while (*end && *end != '"') end += end[0] == '\\' && end[1] ? 2 : 1;
    size_t n = 0;
    char *out = malloc((size_t)(end - s) + 1);  /* an escape never writes more than it reads */
    if (!out) { fputs("es: out of memory\n", stderr); exit(1); }
    for (;;) {
        unsigned char c = (unsigned char)*s++;
        if (c == '"') break;
        if (c < 0x20) { free(out); parse_error = "unterminated string or control character in it"; return NULL; }
        if (c != '\\') { out[n++] = (char)c; continue; }
        c = (unsigned char)*s++;
        const char *plain = strchr("\"\\/bfnrt", c);
        if (c && plain) { out[n++] = "\"\\/\b\f\n\r\t"[plain - "\"\\/bfnrt"]; continue; }
        unsigned code, low;
        if (c != 'u' || !hex4(s, &code)) { free(out); parse_error = "bad escape in a string"; return NULL; }
        s += 4;
        if (code >= 0xD800 && code < 0xDC00) {  /* a surrogate pair */
            if (s[0] != '\\' || s[1] != 'u' || !hex4(s + 2, &low) || low < 0xDC00 || low >= 0xE000) {
                free(out); parse_error = "lone surrogate in a string"; return NULL;
            }
            s += 6;
            code = 0x10000 + ((code - 0xD800) << 10) + (low - 0xDC00);
        } else if (code >= 0xDC00 && code < 0xE000) {
            free(out); parse_error = "lone surrogate in a string"; return NULL;
        }
        if (code < 0x80) out[n++] = (char)code;
        else if (code < 0x800) { out[n++] = (char)(0xC0 | code >> 6); out[n++] = (char)(0x80 | (code & 0x3F)); }
        else if (code < 0x10000) {
            out[n++] = (char)(0xE0 | code >> 12); out[n++] = (char)(0x80 | (code >> 6 & 0x3F));
            out[n++] = (char)(0x80 | (code & 0x3F));
        } else {
            out[n++] = (char)(0xF0 | code >> 18); out[n++] = (char)(0x80 | (code >> 12 & 0x3F));
            out[n++] = (char)(0x80 | (code >> 6 & 0x3F)); out[n++] = (char)(0x80 | (code & 0x3F));
        }
    }
    out[n] = '\0';
    *p = s;
    return out;
}

static int digits(const char **s) {  /* one or more digits */
    const char *start = *s;
    while (**s >= '0' && **s <= '9') (*s)++;
    return *s > start;
}

static value *parse_number(const char **p, value *v) {
    const char *s = *p;
    if (*s == '-') s++;
    if (*s == '0') s++;
    else if (!digits(&s)) return fail("bad number", v);
    if (*s == '.') { s++; if (!digits(&s)) return fail("bad number", v); }
    if (*s == 'e' || *s == 'E') {
        s++;
        if (*s == '+' || *s == '-') s++;
        if (!digits(&s)) return fail("bad number", v);
    }
    size_t n = (size_t)(s - *p);
    v->kind = J_NUMBER;
    v->text = malloc(n + 1);
    if (!v->text) { fputs("es: out of memory\n", stderr); exit(1); }
    memcpy(v->text, *p, n);
    v->text[n] = '\0';
    v->number = strtod(v->text, NULL);
    if (!isfinite(v->number)) return fail("number out of range", v);
    *p = s;
    return v;
}

static value *parse_items(const char **p, value *v, int depth, int object) {
    char close = object ? '}' : ']';
    (*p)++;
    skip_space(p);
    if (**p == close) { (*p)++; return v; }
    for (;;) {
        skip_space(p);
        if (object) {
            if (**p != '"') return fail("expected a member name", v);
            char *key = parse_string(p);
            if (!key) return fail(parse_error, v);
            v->keys = grow(v->keys, v->count, sizeof *v->keys);
            v->keys[v->count] = key;
            skip_space(p);
            if (**p != ':') { v->items = grow(v->items, v->count, sizeof *v->items);
                              v->items[v->count++] = NULL; return fail("expected ':'", v); }
            (*p)++;
        }
        value *item = parse_value(p, depth + 1);
        v->items = grow(v->items, v->count, sizeof *v->items);
        v->items[v->count++] = item;
        if (!item) return fail(parse_error, v);
        skip_space(p);
        if (**p == ',') { (*p)++; continue; }
        if (**p == close) { (*p)++; return v; }
        return fail(object ? "expected ',' or '}'" : "expected ',' or ']'", v);
    }
}

static value *parse_value(const char **p, int depth) {
    if (depth > MAX_DEPTH) return fail("nested too deep", NULL);
    value *v = calloc(1, sizeof *v);
    if (!v) { fputs("es: out of memory\n", stderr); exit(1); }
    skip_space(p);
    const char *s = *p;
    if (*s == '{') { v->kind = J_OBJECT; return parse_items(p, v, depth, 1); }
    if (*s == '[') { v->kind = J_ARRAY; return parse_items(p, v, depth, 0); }
    if (*s == '"') {
        v->kind = J_STRING;
        v->text = parse_string(p);
        return v->text ? v : fail(parse_error, v);
    }
    if (*s == '-' || (*s >= '0' && *s <= '9')) return parse_number(p, v);
    static const char *words[] = {"true", "false", "null"};
    for (int k = 0; k < 3; k++) {
        size_t n = strlen(words[k]);
        if (strncmp(s, words[k], n) == 0) {
            v->kind = k == 2 ? J_NULL : J_BOOL;
            v->truth = k == 0;
            *p = s + n;
            return v;
        }
    }
    return fail("unexpected character", v);
}

static value *parse_document(const char *text) {
    value *v = parse_value(&text, 0);
    if (!v) return NULL;
    skip_space(&text);
    return *text ? fail("text after the value", v) : v;
}

static value *member(const value *object, const char *key) {
    if (!object || object->kind != J_OBJECT) return NULL;
    for (size_t k = 0; k < object->count; k++)
        if (strcmp(object->keys[k], key) == 0) return object->items[k];
    return NULL;
}

/* ---- replies ----------------------------------------------------------------------- */

static void write_string(const char *s) {  /* a JSON string literal */
    putchar('"');
    for (; *s; s++) {
        unsigned char c = (unsigned char)*s;
        if (c == '"' || c == '\\') printf("\\%c", c);
        else if (c < 0x20) printf("\\u%04x", c);
        else putchar(c);
    }
    putchar('"');
}

static void refuse(const char *what, const char *detail) {  /* the error reply; exit */
    char reason[512];
    snprintf(reason, sizeof reason, "%s%s", what, detail ? detail : "");
    fputs("{\"type\":\"error\",\"reason\":", stdout);
    write_string(reason);
    fputs("}\n", stdout);
    fflush(stdout);
    exit(1);
}

/* ---- random numbers: splitmix64 ------------------------------------------------------ */

#define TAU 6.283185307179586
static uint64_t rng_state;
static int has_spare;
static double spare;

static uint64_t next64(void) {
    uint64_t z = (rng_state += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

static double uniform(void) { return (double)(next64() >> 11) * 0x1.0p-53; }  /* [0, 1) */

static double gauss(void) {  /* standard normal, Box-Muller */
    if (has_spare) { has_spare = 0; return spare; }
    double r = sqrt(-2.0 * log(1.0 - uniform())), angle = TAU * uniform();
    spare = r * sin(angle);
    has_spare = 1;
    return r * cos(angle);
}

/* ---- the strategy ------------------------------------------------------------------- */

static long lambda_ = 10, hidden = 3;
static double sigma = 1.0, init_range = 2.0;
static long inputs, outputs, n_weights, generation;
static long *sources, *targets;
static double *parent, *batch, parent_fitness = -INFINITY;

static int whole(const value *v, long low, long high, long *out) {
    if (!v || v->kind != J_NUMBER || v->number != floor(v->number) || v->number < low || v->number > high)
        return 0;
    *out = (long)v->number;
    return 1;
}

static void read_options(const value *options) {
    if (!options || options->kind != J_OBJECT) refuse("start: 'options' must be an object", NULL);
    for (size_t k = 0; k < options->count; k++) {
        const char *key = options->keys[k];
        const value *v = options->items[k];
        if (strcmp(key, "lambda") == 0) {
            if (!whole(v, 1, 1000000, &lambda_)) refuse("option 'lambda' must be a whole number in [1, 1000000]", NULL);
        } else if (strcmp(key, "hidden") == 0) {
            if (!whole(v, 0, 10000, &hidden)) refuse("option 'hidden' must be a whole number in [0, 10000]", NULL);
        } else if (strcmp(key, "sigma") == 0 || strcmp(key, "init_range") == 0) {
            if (!v || v->kind != J_NUMBER || v->number <= 0) refuse("this option must be a number > 0: ", key);
            *(strcmp(key, "sigma") == 0 ? &sigma : &init_range) = v->number;
        } else {
            refuse("unknown option (known: lambda, sigma, hidden, init_range): ", key);
        }
    }
}

static void start(const value *message) {
    const value *version = member(message, "version"), *seed = member(message, "seed");
    const value *problem = member(message, "problem"), *memory = member(problem, "needs_memory");
    if (!version || version->kind != J_NUMBER || version->number != 1) refuse("start: protocol version is not 1", NULL);
    if (!seed || seed->kind != J_NUMBER || strspn(seed->text, "0123456789") != strlen(seed->text))
        refuse("start: 'seed' must be a non-negative integer", NULL);
    if (!whole(member(problem, "inputs"), 0, 100000, &inputs) || !whole(member(problem, "outputs"), 1, 100000, &outputs))
        refuse("start: 'problem' needs 'inputs' and 'outputs'", NULL);
    if (memory && memory->kind == J_BOOL && memory->truth)
        refuse("this example evolves feedforward networks; the task needs memory", NULL);
    read_options(member(message, "options"));
    rng_state = strtoull(seed->text, NULL, 10);
    /* links in weight order; ids: inputs 0.., bias, hidden, outputs */
    long bias = inputs, first_hidden = bias + 1, first_output = first_hidden + hidden;
    n_weights = hidden ? hidden * (inputs + 1) + outputs * (hidden + 1) : outputs * (inputs + 1);
    sources = malloc(n_weights * sizeof *sources);
    targets = malloc(n_weights * sizeof *targets);
    parent = malloc(n_weights * sizeof *parent);
    batch = malloc(lambda_ * n_weights * sizeof *batch);
    if (!sources || !targets || !parent || !batch) { fputs("es: out of memory\n", stderr); exit(1); }
    long e = 0, into = hidden ? first_hidden : first_output, count = hidden ? hidden : outputs;
    for (long t = 0; t < count; t++)
        for (long s = 0; s <= inputs; s++) sources[e] = s, targets[e++] = into + t;  /* s == inputs: bias */
    for (long t = 0; hidden && t < outputs; t++) {
        for (long s = 0; s < hidden; s++) sources[e] = first_hidden + s, targets[e++] = first_output + t;
        sources[e] = bias, targets[e++] = first_output + t;
    }
    for (long k = 0; k < n_weights; k++) parent[k] = (2.0 * uniform() - 1.0) * init_range;
    printf("{\"type\":\"ready\",\"version\":1,\"settings\":{\"lambda\":%ld,\"sigma\":%.17g,"
           "\"hidden\":%ld,\"init_range\":%.17g}}\n", lambda_, sigma, hidden, init_range);
}

static void ask(void) {
    fputs("{\"type\":\"batch\",\"networks\":[", stdout);
    for (long m = 0; m < lambda_; m++) {
        double *w = batch + m * n_weights;
        int keep = generation == 0 && m == 0;  /* the parent itself first */
        for (long k = 0; k < n_weights; k++) w[k] = parent[k] + (keep ? 0.0 : sigma * gauss());
        fputs(m ? ",{\"nodes\":[" : "{\"nodes\":[", stdout);
        for (long id = 0; id < inputs + 1 + hidden + outputs; id++) {
            const char *kind = id < inputs ? "input" : id == inputs ? "bias" : id <= inputs + hidden ? "hidden" : "output";
            printf("%s{\"id\":%ld,\"kind\":\"%s\"%s}", id ? "," : "", id, kind,
                   id > inputs ? ",\"activation\":\"neat_sigmoid\"" : "");
        }
        fputs("],\"connections\":[", stdout);
        for (long k = 0; k < n_weights; k++)
            printf("%s{\"source\":%ld,\"target\":%ld,\"weight\":%.17g}", k ? "," : "", sources[k], targets[k], w[k]);
        fputs("]}", stdout);
    }
    fputs("]}\n", stdout);
}

static void tell(const value *message) {
    const value *evaluations = member(message, "evaluations");
    if (!evaluations || evaluations->kind != J_ARRAY || evaluations->count < 1 || (long)evaluations->count > lambda_)
        refuse("tell: 'evaluations' must hold 1 to lambda results", NULL);
    long best = -1;
    double best_fitness = -INFINITY;
    for (size_t k = 0; k < evaluations->count; k++) {  /* the first of the fittest */
        const value *fitness = member(evaluations->items[k], "fitness");
        if (!fitness || fitness->kind != J_NUMBER) refuse("tell: an evaluation has no 'fitness' number", NULL);
        if (best < 0 || fitness->number > best_fitness) best = (long)k, best_fitness = fitness->number;
    }
    if (best_fitness >= parent_fitness) {
        memcpy(parent, batch + best * n_weights, n_weights * sizeof *parent);
        parent_fitness = best_fitness;
    }
    generation++;
    fputs("{\"type\":\"noted\"}\n", stdout);
}

int main(void) {
    static char out_buffer[1 << 16];
    setvbuf(stdout, out_buffer, _IOFBF, sizeof out_buffer);
    char *line = NULL;
    size_t size = 0;
    int started = 0;
    while (getline(&line, &size, stdin) >= 0) {
        value *message = parse_document(line);
        if (!message) refuse("cannot read a request: ", parse_error);
        const value *type = member(message, "type");
        const char *name = type && type->kind == J_STRING ? type->text : "";
        if (strcmp(name, "stop") == 0) return 0;
        if (!started && strcmp(name, "start") != 0) refuse("the first request must be start, not ", name);
        if (strcmp(name, "start") == 0 && !started) start(message), started = 1;
        else if (strcmp(name, "ask") == 0) ask();
        else if (strcmp(name, "tell") == 0) tell(message);
        else if (strcmp(name, "stats") == 0) printf("{\"type\":\"figures\",\"values\":{\"parent_fitness\":%.17g}}\n", parent_fitness);
        else refuse("unknown request type: ", name);
        fflush(stdout);
        release(message);
    }
    return 0;
}
