/* Replays a CSV through a regimix model from C: the embedded developer's starting point.
 *
 *   replay [--f32] MODEL.rgmx INPUTS.csv
 *
 * --f32 runs the single-precision sensor (rgx_*_f32), as a controller with a single-precision
 * FPU would; numbers are then printed with 9 significant digits, enough to give back each float.
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

/* A number with the digits that give back its bits: 17 for a double, 9 for a float. */
static void print_number(int f32, double v) { printf(f32 ? "%.9g" : "%.17g", v); }

/* One sample through either sensor; the estimate and weights are returned as doubles. */
static int step(int f32, void *sensor, const double *inputs, size_t n, double out[3],
                unsigned *status, unsigned *regime, double *weights, size_t *n_weights) {
    size_t i;
    int rc;
    if (f32) {
        float x[MAX_INPUTS], w[MAX_REGIMES];
        RgxEstimateF32 est;
        for (i = 0; i < n; i++) x[i] = (float)inputs[i];
        rc = rgx_step_f32((RgxSensorF32 *)sensor, x, n, &est);
        if (rc != RGX_OK) return rc;
        rc = rgx_weights_f32((RgxSensorF32 *)sensor, w, MAX_REGIMES, n_weights);
        for (i = 0; i < *n_weights; i++) weights[i] = w[i];
        out[0] = est.value;
        out[1] = est.model_value;
        out[2] = est.typicality;
        *status = est.status;
        *regime = est.dominant;
    } else {
        RgxEstimate est;
        rc = rgx_step((RgxSensor *)sensor, inputs, n, &est);
        if (rc != RGX_OK) return rc;
        rc = rgx_weights((RgxSensor *)sensor, weights, MAX_REGIMES, n_weights);
        out[0] = est.value;
        out[1] = est.model_value;
        out[2] = est.typicality;
        *status = est.status;
        *regime = est.dominant;
    }
    return rc;
}

int main(int argc, char **argv) {
    size_t model_len = 0, words = 0, n_weights = 0, n = 0;
    unsigned char *model;
    void *state;
    RgxSensor sensor;
    RgxSensorF32 sensor_f32;
    char line[8192];
    FILE *csv;
    int rc, f32 = argc == 4 && strcmp(argv[1], "--f32") == 0;

    if (argc != 3 + f32) {
        fprintf(stderr, "usage: replay [--f32] MODEL.rgmx INPUTS.csv\n");
        return 2;
    }
    model = read_file(argv[1 + f32], &model_len);
    if (!model) {
        fprintf(stderr, "cannot read %s\n", argv[1 + f32]);
        return 2;
    }
    rc = f32 ? rgx_state_words_f32(model, model_len, &words)
             : rgx_state_words(model, model_len, &words);
    if (rc != RGX_OK) {
        fprintf(stderr, "invalid model: code %d\n", rc);
        return 2;
    }
    /* or a static buffer sized at build time */
    state = malloc(words * (f32 ? sizeof(float) : sizeof(double)));
    rc = !state ? -1
         : f32  ? rgx_init_f32(&sensor_f32, model, model_len, (float *)state, words)
                : rgx_init(&sensor, model, model_len, (double *)state, words);
    if (rc != RGX_OK) {
        fprintf(stderr, "cannot set up the sensor\n");
        return 2;
    }
    csv = fopen(argv[2 + f32], "r");
    if (!csv || !fgets(line, sizeof line, csv)) {
        fprintf(stderr, "cannot read %s\n", argv[2 + f32]);
        return 2;
    }
    while (fgets(line, sizeof line, csv)) {
        double inputs[MAX_INPUTS], weights[MAX_REGIMES], est[3];
        unsigned status, regime;
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
        rc = step(f32, f32 ? (void *)&sensor_f32 : (void *)&sensor, inputs, n, est, &status,
                  &regime, weights, &n_weights);
        if (rc != RGX_OK) {
            fprintf(stderr, "step failed: code %d\n", rc);
            return 1;
        }
        printf("%s,", stamp);
        print_number(f32, est[0]);
        printf(",%u,", status);
        print_number(f32, est[2]);
        printf(",%u", regime + 1);
        for (i = 0; i < n_weights; i++) {
            printf(",");
            print_number(f32, weights[i]);
        }
        printf("\n");
    }
    fclose(csv);
    free(state);
    free(model);
    return 0;
}
