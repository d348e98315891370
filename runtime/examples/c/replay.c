/* Replays a CSV through a regimix model from C: the embedded developer's starting point.
 *
 *   replay MODEL.rgmx INPUTS.csv
 *
 * INPUTS.csv: a header line, then one sample per line: a timestamp, then the model's inputs in
 * model order. Anything that is not a number (a quality marker, an empty cell) is passed as NaN,
 * which the runtime substitutes or flags. Prints: timestamp,estimate,status,typicality,regime,
 * then the regime weights, numbers with 17 significant digits.
 *
 * Build: cc -std=c99 -I runtime/include replay.c libregimix_runtime.a -lm -lpthread -ldl
 */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "regimix.h"

#define MAX_INPUTS 32
#define MAX_REGIMES 16

static unsigned char *read_file(const char *path, size_t *len) {
    FILE *f = fopen(path, "rb");
    unsigned char *buf;
    long size;
    if (!f) return NULL;
    if (fseek(f, 0, SEEK_END) != 0 || (size = ftell(f)) < 0 || fseek(f, 0, SEEK_SET) != 0) {
        fclose(f);
        return NULL;
    }
    buf = malloc((size_t)size + 1);
    if (buf && fread(buf, 1, (size_t)size, f) != (size_t)size) {
        free(buf);
        buf = NULL;
    }
    fclose(f);
    *len = (size_t)size;
    return buf;
}

int main(int argc, char **argv) {
    size_t model_len = 0, words = 0, n_weights = 0, n = 0;
    unsigned char *model;
    double *state;
    RgxSensor sensor;
    RgxEstimate est;
    char line[8192];
    FILE *csv;
    int rc;

    if (argc != 3) {
        fprintf(stderr, "usage: replay MODEL.rgmx INPUTS.csv\n");
        return 2;
    }
    model = read_file(argv[1], &model_len);
    if (!model) {
        fprintf(stderr, "cannot read %s\n", argv[1]);
        return 2;
    }
    rc = rgx_state_words(model, model_len, &words);
    if (rc != RGX_OK) {
        fprintf(stderr, "invalid model: code %d\n", rc);
        return 2;
    }
    state = malloc(words * sizeof(double)); /* or a static buffer sized at build time */
    if (!state || rgx_init(&sensor, model, model_len, state, words) != RGX_OK) {
        fprintf(stderr, "cannot set up the sensor\n");
        return 2;
    }
    csv = fopen(argv[2], "r");
    if (!csv || !fgets(line, sizeof line, csv)) {
        fprintf(stderr, "cannot read %s\n", argv[2]);
        return 2;
    }
    while (fgets(line, sizeof line, csv)) {
        double inputs[MAX_INPUTS], weights[MAX_REGIMES];
        char *stamp = line, *field, *comma;
        size_t i;
        line[strcspn(line, "\r\n")] = '\0';
        comma = strchr(line, ',');
        if (!comma) continue;
        *comma = '\0';
        field = comma + 1;
        n = 0;
        while (field && n < MAX_INPUTS) {
            char *next = strchr(field, ',');
            char *end;
            double v;
            if (next) *next = '\0';
            v = strtod(field, &end);
            inputs[n++] = (end != field && *end == '\0') ? v : NAN;
            field = next ? next + 1 : NULL;
        }
        rc = rgx_step(&sensor, inputs, n, &est);
        if (rc != RGX_OK) {
            fprintf(stderr, "step failed: code %d\n", rc);
            return 1;
        }
        rgx_weights(&sensor, weights, MAX_REGIMES, &n_weights);
        printf("%s,%.17g,%u,%.17g,%u", stamp, est.value, (unsigned)est.status, est.typicality,
               (unsigned)est.dominant + 1);
        for (i = 0; i < n_weights; i++) printf(",%.17g", weights[i]);
        printf("\n");
    }
    fclose(csv);
    free(state);
    free(model);
    return 0;
}
