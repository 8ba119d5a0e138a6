/*
 * Random-row gather probe: the memory access of the sparse kernel's weighted sum (each CSR entry
 * reads one source node's value row), in plain C with the row sums held in registers, so that its rate is the
 * limit the sparse GAT layer is stated against (benchmarks/sparse-vs-gather.sh).
 *
 * Table: rows of ROW_FLOATS floats (64 by default: 256 bytes, the value row of 8 heads x 8 dims)
 * filling table_MiB (256 by default, far beyond the caches). Each output row is the sum of 16
 * table rows picked uniformly at random (seeded); one trial gathers 1 GiB of row payload, split
 * over the threads by output rows. One untimed trial, then `trials` timed ones; the line printed
 * gives their median, fastest and slowest. Counted bytes are the gathered rows only (not the
 * indices read or the output written).
 *
 * Build:  cc -O3 -march=native -pthread -o random-gather random-gather.c
 *         (-DROW_FLOATS=16 for another row width, a multiple of 8)
 * Usage:  random-gather [table_MiB=256] [threads=2] [trials=7]
 *         HUGE_PAGES=1 in the environment asks for transparent huge pages on the table (Linux).
 * Output: GATHER threads=2 table_MiB=256 row_bytes=256 rows=1048576 pattern=random
 *         GB/s median=... min=... max=...  Mrows/s median=... min=... max=...  all: ...  check=...
 */
#define _GNU_SOURCE
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#ifdef __linux__
#include <unistd.h>
#endif

#define PROBE_NAME "random-gather"
#define PROBE_USAGE "random-gather [table_MiB=256] [threads=2] [trials=7]"
#include "probe.h"

#ifndef ROW_FLOATS
#define ROW_FLOATS 64
#endif
#define ROWS_PER_OUTPUT 16
#define MAX_THREADS 256
#define MAX_TRIALS 99
#define PAYLOAD_BYTES_PER_TRIAL (1L << 30)

struct part {
  const float *table;
  const uint32_t *indices;
  float *out;
  size_t from;
  size_t to;
  int core;
};

/* splitmix64 (Steele, Lea, Flood, OOPSLA 2014): seeded, fast, good enough for row picks */
static uint64_t next_random(uint64_t *state) {
  uint64_t z = (*state += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

/* 8 floats as one value: GCC and Clang keep a row's sums in registers and add whole lines */
#define LANES 8
typedef float lanes __attribute__((vector_size(LANES * sizeof(float))));
_Static_assert(ROW_FLOATS % LANES == 0, "ROW_FLOATS must be a multiple of 8");

static void gather_rows(const float *restrict table, const uint32_t *restrict indices,
                        float *restrict out, size_t from, size_t to) {
  for (size_t o = from; o < to; o++) {
    lanes sum[ROW_FLOATS / LANES] = {{0}};
    const uint32_t *picks = indices + o * ROWS_PER_OUTPUT;
    for (int k = 0; k < ROWS_PER_OUTPUT; k++) {
      const float *row = table + (size_t)picks[k] * ROW_FLOATS;
      for (int c = 0; c < ROW_FLOATS / LANES; c++) {
        lanes line;
        memcpy(&line, row + c * LANES, sizeof line);
        sum[c] += line;
      }
    }
    memcpy(out + o * ROW_FLOATS, sum, sizeof sum);
  }
}

static void *gather_part(void *arg) {
  const struct part *p = arg;
  pin_to_core(p->core);
  gather_rows(p->table, p->indices, p->out, p->from, p->to);
  return NULL;
}

int main(int argc, char **argv) {
  long table_mib = argument(argc, argv, 1, 256, 1, 1L << 16);
  int threads = (int)argument(argc, argv, 2, 2, 1, MAX_THREADS);
  int trials = (int)argument(argc, argv, 3, 7, 1, MAX_TRIALS);
  int huge_pages = huge_pages_requested();

  const size_t row_bytes = ROW_FLOATS * sizeof(float);
  const size_t rows = ((size_t)table_mib << 20) / row_bytes;
  const size_t gathers = PAYLOAD_BYTES_PER_TRIAL / row_bytes;
  const size_t outputs = gathers / ROWS_PER_OUTPUT;
  if (rows == 0 || rows > UINT32_MAX) {
    fprintf(stderr, "random-gather: a %ld MiB table of %zu-byte rows has %zu rows; use 1..%u\n",
            table_mib, row_bytes, rows, UINT32_MAX);
    return 2;
  }

  float *table = allocate(rows * row_bytes, huge_pages);
  for (size_t i = 0; i < rows * ROW_FLOATS; i++) {
    table[i] = (float)(i % 1000) * 1e-3f;
  }
  uint32_t *indices = allocate(gathers * sizeof(uint32_t), 0);
  uint64_t state = 20260401;
  for (size_t g = 0; g < gathers; g++) {
    indices[g] = (uint32_t)(((next_random(&state) >> 32) * (uint64_t)rows) >> 32);
  }
  float *out = allocate(outputs * row_bytes, 0);

  int cores = 1;
#ifdef __linux__
  long online = sysconf(_SC_NPROCESSORS_ONLN);
  cores = online > 0 ? (int)online : 1;
#endif
  struct part parts[MAX_THREADS];
  pthread_t workers[MAX_THREADS];
  double rates[MAX_TRIALS];
  double check = 0;
  for (int trial = -1; trial < trials; trial++) {
    double start = seconds();
    for (int t = 0; t < threads; t++) {
      parts[t] = (struct part){table, indices, out, outputs * t / threads,
                               outputs * (t + 1) / threads, t % cores};
      if (pthread_create(&workers[t], NULL, gather_part, &parts[t]) != 0) {
        fprintf(stderr, "random-gather: cannot start thread %d\n", t);
        return 1;
      }
    }
    for (int t = 0; t < threads; t++) {
      pthread_join(workers[t], NULL);
    }
    double elapsed = seconds() - start;
    check += out[(outputs / 2) * ROW_FLOATS];
    if (trial >= 0) {
      rates[trial] = (double)gathers * row_bytes / elapsed / 1e9;
    }
  }

  double sorted[MAX_TRIALS];
  memcpy(sorted, rates, trials * sizeof(double));
  double median = sorted_median(sorted, trials);
  double low = sorted[0], high = sorted[trials - 1];
  double to_mrows = 1e3 / (double)row_bytes;
  printf("GATHER threads=%d table_MiB=%ld row_bytes=%zu rows=%zu pattern=random huge=%d"
         "  GB/s median=%.2f min=%.2f max=%.2f  Mrows/s median=%.1f min=%.1f max=%.1f  all:",
         threads, table_mib, row_bytes, rows, huge_pages, median, low, high, median * to_mrows,
         low * to_mrows, high * to_mrows);
  for (int i = 0; i < trials; i++) {
    printf(" %.2f", rates[i]);
  }
  printf("  check=%g\n", check);
  free(table);
  free(indices);
  free(out);
  return 0;
}
