/*
 * What the C probes share: a monotonic clock, 2 MiB-aligned allocation with or without transparent
 * huge pages (asked for with HUGE_PAGES=1), pinning a thread to a core, the median of a run's
 * trials, and checked integer arguments. Each probe sets
 * PROBE_NAME and PROBE_USAGE before including this file.
 */
#ifndef HEED_PROBE_H
#define HEED_PROBE_H

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>
#ifdef __linux__
#include <sched.h>
#include <sys/mman.h>
#endif

static double seconds(void) {
  struct timespec t;
  clock_gettime(CLOCK_MONOTONIC, &t);
  return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static void *allocate(size_t bytes, int huge_pages) {
  const size_t alignment = (size_t)2 << 20;
  void *p = NULL;
  bytes = (bytes + alignment - 1) / alignment * alignment;
  if (posix_memalign(&p, alignment, bytes) != 0) {
    fprintf(stderr, PROBE_NAME ": cannot allocate %zu bytes\n", bytes);
    exit(1);
  }
#ifdef __linux__
  madvise(p, bytes, huge_pages ? MADV_HUGEPAGE : MADV_NOHUGEPAGE);
#else
  (void)huge_pages;
#endif
  return p;
}

/* whether HUGE_PAGES in the environment asks for transparent huge pages */
static int huge_pages_requested(void) {
  const char *huge_env = getenv("HUGE_PAGES");
  return huge_env != NULL && atoi(huge_env) != 0;
}

/* pins the calling thread to a core, best effort (Linux only) */
static void pin_to_core(int core) {
#ifdef __linux__
  cpu_set_t cores;
  CPU_ZERO(&cores);
  CPU_SET(core, &cores);
  pthread_setaffinity_np(pthread_self(), sizeof cores, &cores);
#else
  (void)core;
#endif
}

static int by_value(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* sorts values[0..n-1] in place and returns their median */
static double sorted_median(double *values, int n) {
  qsort(values, n, sizeof(double), by_value);
  return n % 2 ? values[n / 2] : 0.5 * (values[n / 2 - 1] + values[n / 2]);
}

/* argv[i] as an integer in low..high, or fallback if absent; exits with the usage otherwise */
static long argument(int argc, char **argv, int i, long fallback, long low, long high) {
  if (argc <= i) {
    return fallback;
  }
  char *end;
  long v = strtol(argv[i], &end, 10);
  if (*end != '\0' || v < low || v > high) {
    fprintf(stderr, PROBE_NAME ": argument %d is '%s', expected an integer in %ld..%ld\n"
                    "usage: " PROBE_USAGE "\n",
            i, argv[i], low, high);
    exit(2);
  }
  return v;
}

#endif
