/*
 * Sequential memory probe: the streaming part of a sparse kernel call (reading inputs in node order,
 * writing the packed node table and the output rows), in plain C, so that the bytes a call moves in
 * order can be priced against what this machine streams. Three loops over float arrays far beyond
 * the caches, split over the threads by equal ranges:
 *   read   sum of a (bytes counted: a)
 *   write  a[i] = constant (bytes counted: a; the processor also reads each line before writing it,
 *          the write-allocate that ordinary stores cost, so the bus carries about twice that)
 *   copy   b[i] = a[i] (bytes counted: a and b; again plus a read of each line of b)
 * One untimed trial per loop, then `trials` timed ones; each line gives the median, fastest and
 * slowest rate of the counted bytes.
 *
 * Build:  cc -O3 -march=native -pthread -o stream stream.c
 * Usage:  stream [array_MiB=512] [threads=2] [trials=7]
 *         HUGE_PAGES=1 in the environment asks for transparent huge pages (Linux).
 * Output: STREAM op=read threads=2 array_MiB=512 huge=1  GB/s median=... min=... max=...
 */
#define _GNU_SOURCE
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#ifdef __linux__
#include <unistd.h>
#endif

#define PROBE_NAME "stream"
#define PROBE_USAGE "stream [array_MiB=512] [threads=2] [trials=7]"
#include "probe.h"

#define MAX_THREADS 256
#define MAX_TRIALS 99
#define LANES 16
typedef float lanes __attribute__((vector_size(LANES * sizeof(float))));

enum op { READ, WRITE, COPY };
static const char *const OP_NAMES[] = {"read", "write", "copy"};

struct part {
  float *a;
  float *b;
  size_t from;
  size_t to;
  enum op op;
  int core;
  float result;
};

static void *run_part(void *arg) {
  struct part *p = arg;
  pin_to_core(p->core);
  if (p->op == READ) {
    lanes s0 = {0}, s1 = {0}, s2 = {0}, s3 = {0};
    for (size_t i = p->from; i < p->to; i += 4 * LANES) {
      lanes x0, x1, x2, x3;
      memcpy(&x0, p->a + i, sizeof x0);
      memcpy(&x1, p->a + i + LANES, sizeof x1);
      memcpy(&x2, p->a + i + 2 * LANES, sizeof x2);
      memcpy(&x3, p->a + i + 3 * LANES, sizeof x3);
      s0 += x0;
      s1 += x1;
      s2 += x2;
      s3 += x3;
    }
    lanes s = s0 + s1 + s2 + s3;
    float total = 0;
    for (int k = 0; k < LANES; k++) {
      total += s[k];
    }
    p->result = total;
  } else if (p->op == WRITE) {
    lanes v;
    for (int k = 0; k < LANES; k++) {
      v[k] = 0.5f;
    }
    for (size_t i = p->from; i < p->to; i += LANES) {
      memcpy(p->a + i, &v, sizeof v);
    }
    p->result = p->a[p->from];
  } else {
    for (size_t i = p->from; i < p->to; i += LANES) {
      lanes x;
      memcpy(&x, p->a + i, sizeof x);
      memcpy(p->b + i, &x, sizeof x);
    }
    p->result = p->b[p->from];
  }
  return NULL;
}

int main(int argc, char **argv) {
  long array_mib = argument(argc, argv, 1, 512, 1, 1L << 16);
  int threads = (int)argument(argc, argv, 2, 2, 1, MAX_THREADS);
  int trials = (int)argument(argc, argv, 3, 7, 1, MAX_TRIALS);
  int huge_pages = huge_pages_requested();

  /* whole blocks of 4 vectors per thread, so no loop needs a tail */
  const size_t block = 4 * LANES * (size_t)threads;
  const size_t floats = ((size_t)array_mib << 20) / sizeof(float) / block * block;
  float *a = (float *)allocate(floats * sizeof(float), huge_pages);
  float *b = (float *)allocate(floats * sizeof(float), huge_pages);
  for (size_t i = 0; i < floats; i++) {
    a[i] = (float)(i % 1000) * 1e-3f;
    b[i] = 0;
  }

  int cores = 1;
#ifdef __linux__
  long online = sysconf(_SC_NPROCESSORS_ONLN);
  cores = online > 0 ? (int)online : 1;
#endif
  struct part parts[MAX_THREADS];
  pthread_t workers[MAX_THREADS];
  double check = 0;
  for (int o = READ; o <= COPY; o++) {
    double rates[MAX_TRIALS];
    double counted = (double)floats * sizeof(float) * (o == COPY ? 2 : 1);
    for (int trial = -1; trial < trials; trial++) {
      double start = seconds();
      for (int t = 0; t < threads; t++) {
        parts[t] = (struct part){a, b, floats / threads * t, floats / threads * (t + 1),
                                 (enum op)o, t % cores, 0};
        if (pthread_create(&workers[t], NULL, run_part, &parts[t]) != 0) {
          fprintf(stderr, "stream: cannot start thread %d\n", t);
          return 1;
        }
      }
      for (int t = 0; t < threads; t++) {
        pthread_join(workers[t], NULL);
        check += parts[t].result;
      }
      double elapsed = seconds() - start;
      if (trial >= 0) {
        rates[trial] = counted / elapsed / 1e9;
      }
    }
    double median = sorted_median(rates, trials);
    printf("STREAM op=%s threads=%d array_MiB=%ld huge=%d  GB/s median=%.2f min=%.2f max=%.2f"
           "  (check %.3g)\n",
           OP_NAMES[o], threads, array_mib, huge_pages, median, rates[0], rates[trials - 1],
           check);
  }
  return 0;
}
