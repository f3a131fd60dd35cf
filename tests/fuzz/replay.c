/* replay.c: runs a libFuzzer target over saved inputs without libFuzzer,
 * so `make check` replays the seed corpus and every input that ever crashed
 * as ordinary tests (zstd tests/fuzz/ does the same). Arguments: files or
 * directories (their regular files, not recursive). Exit 0 when every input
 * ran; a crash ends the process with the signal, as in the fuzzer.
 * The targets' own error lines (bad inputs are expected) are hidden unless
 * KW_REPLAY_VERBOSE=1; rerun a failing replay with it to see the report. */
#define _POSIX_C_SOURCE 200809L
#include <dirent.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static int run_file(const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "replay: %s: cannot open\n", path);
        return 1;
    }
    size_t cap = 1 << 12, n = 0;
    uint8_t *buf = malloc(cap);
    for (;;) {
        if (!buf)
            break;
        if (n == cap) {
            uint8_t *nb = realloc(buf, cap * 2);
            if (!nb) {
                free(buf);
                buf = NULL;
                break;
            }
            buf = nb;
            cap *= 2;
        }
        size_t r = fread(buf + n, 1, cap - n, f);
        n += r;
        if (r == 0)
            break;
    }
    fclose(f);
    if (!buf) {
        fprintf(stderr, "replay: %s: out of memory\n", path);
        return 1;
    }
    /* An exact-size copy, so that ASan catches reads past the input. */
    uint8_t *exact = malloc(n ? n : 1);
    if (!exact) {
        free(buf);
        return 1;
    }
    memcpy(exact, buf, n);
    free(buf);
    LLVMFuzzerTestOneInput(exact, n);
    free(exact);
    return 0;
}

static int cmp(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

int main(int argc, char **argv)
{
    int bad = 0, count = 0;
    const char *verbose = getenv("KW_REPLAY_VERBOSE");
    int saved = -1;
    if (!verbose || strcmp(verbose, "1") != 0) {
        fflush(stderr);
        saved = dup(STDERR_FILENO);
        int fd = open("/dev/null", O_WRONLY);
        if (fd >= 0) {
            dup2(fd, STDERR_FILENO);
            close(fd);
        }
    }
    for (int i = 1; i < argc; i++) {
        struct stat sb;
        if (stat(argv[i], &sb) != 0) {
            fprintf(stderr, "replay: %s: not found\n", argv[i]);
            bad = 1;
            continue;
        }
        if (!S_ISDIR(sb.st_mode)) {
            bad |= run_file(argv[i]);
            count++;
            continue;
        }
        DIR *d = opendir(argv[i]);
        if (!d) {
            bad = 1;
            continue;
        }
        char **names = NULL;
        size_t nn = 0;
        struct dirent *e;
        while ((e = readdir(d))) {
            if (e->d_name[0] == '.')
                continue;
            char **nb = realloc(names, (nn + 1) * sizeof *names);
            if (!nb)
                break;
            names = nb;
            size_t len = strlen(argv[i]) + strlen(e->d_name) + 2;
            names[nn] = malloc(len);
            if (!names[nn])
                break;
            snprintf(names[nn], len, "%s/%s", argv[i], e->d_name);
            nn++;
        }
        closedir(d);
        qsort(names, nn, sizeof *names, cmp);
        for (size_t k = 0; k < nn; k++) {
            if (stat(names[k], &sb) == 0 && S_ISREG(sb.st_mode)) {
                bad |= run_file(names[k]);
                count++;
            }
            free(names[k]);
        }
        free(names);
    }
    if (saved >= 0) {
        fflush(stderr);
        dup2(saved, STDERR_FILENO);
        close(saved);
    }
    printf("replay: %s: %d inputs, all handled\n", argc > 1 ? argv[1] : "", count);
    return bad;
}
