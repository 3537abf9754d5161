// LD_PRELOAD shim for benches/copy_census.sh: counts memcpy/memmove calls and bytes
// per return address, and writes them with the process maps at exit. Copies with
// `rep movsb` itself, so it never calls back into the functions it replaces.
#define _GNU_SOURCE
#include <stdint.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <stdatomic.h>

#define SLOTS (1 << 16)
struct slot { _Atomic uintptr_t ra; _Atomic uint64_t calls, bytes; };
static struct slot table[SLOTS];

static void record(uintptr_t ra, size_t n) {
  size_t h = (size_t)((ra * 0x9E3779B97F4A7C15ull) >> 48) & (SLOTS - 1);
  for (int i = 0; i < SLOTS; i++) {
    uintptr_t cur = atomic_load_explicit(&table[h].ra, memory_order_relaxed);
    if (cur == ra) break;
    if (cur == 0) {
      uintptr_t z = 0;
      if (atomic_compare_exchange_strong(&table[h].ra, &z, ra) || z == ra) break;
    }
    h = (h + 1) & (SLOTS - 1);
  }
  atomic_fetch_add_explicit(&table[h].calls, 1, memory_order_relaxed);
  atomic_fetch_add_explicit(&table[h].bytes, n, memory_order_relaxed);
}

static void copy_fwd(void *d, const void *s, size_t n) {
  __asm__ volatile("rep movsb" : "+D"(d), "+S"(s), "+c"(n) : : "memory");
}
static void copy_bwd(unsigned char *d, const unsigned char *s, size_t n) {
  while (n--) d[n] = s[n];
}

void *memcpy(void *d, const void *s, size_t n) {
  record((uintptr_t)__builtin_return_address(0), n);
  copy_fwd(d, s, n);
  return d;
}
void *memmove(void *d, const void *s, size_t n) {
  record((uintptr_t)__builtin_return_address(0), n);
  if ((uintptr_t)d <= (uintptr_t)s || (uintptr_t)d >= (uintptr_t)s + n) copy_fwd(d, s, n);
  else copy_bwd(d, s, n);
  return d;
}

__attribute__((destructor)) static void dump(void) {
  const char *path = getenv("COPY_CENSUS_OUT");
  if (!path) path = "copy_census.txt";
  FILE *f = fopen(path, "w");
  if (!f) return;
  FILE *maps = fopen("/proc/self/maps", "r");
  char line[4096];
  while (maps && fgets(line, sizeof line, maps)) fprintf(f, "MAP %s", line);
  if (maps) fclose(maps);
  for (int i = 0; i < SLOTS; i++)
    if (table[i].ra)
      fprintf(f, "RA %lx %lu %lu\n", (unsigned long)table[i].ra, (unsigned long)table[i].calls,
              (unsigned long)table[i].bytes);
  fclose(f);
}
