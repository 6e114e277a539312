/*
 * cmd_hil.c - `tidelock hil`: run golden vectors on a target over the link
 * protocol (firmware/tl_link.h, docs/icd.md "Link protocol") and compare
 * its frame streams with the expected ones.
 *
 * Every target is a byte stream: a process's stdin/stdout, a TCP port (the
 * emulated Cortex-M7's UART), or a serial device; after opening, the same
 * code drives all of them. Per vector: RESET, the table image in pieces,
 * CONFIG, the samples in pieces, END, each message acknowledged before the
 * next (stop-and-wait), with the FRAMES the target sends collected in
 * between. A NAK or a missing answer resends the message (the target
 * answers a repeat without processing it twice); a gap in the target's
 * sequence numbers (a lost or damaged message) or a target that starts up
 * again runs the vector again from RESET. Damaged frames on the line are
 * counted and skipped; nothing they carried is ever used.
 */
#include <arpa/inet.h>
#include <errno.h>
#include <fcntl.h>
#include <getopt.h>
#include <jansson.h>
#include <netinet/in.h>
#include <poll.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <termios.h>
#include <time.h>
#include <unistd.h>

#include "atomic_file.h"
#include "commands.h"
#include "tl_bytes.h"
#include "tl_frame.h"
#include "tl_link.h"
#include "tl_taps.h"
#include "vectors.h"

static const char *const hil_help =
    "usage: tidelock hil --target TARGET [options] VECTOR...\n"
    "\n"
    "Run golden vectors on a target over the link protocol and compare the transfer frames it\n"
    "sends with the expected ones, byte for byte. A VECTOR is a vector folder (vectors/NAME) or a\n"
    "folder of vectors with a manifest.json (all of them, in its order).\n"
    "\n"
    "targets:\n"
    "  exec:COMMAND        a process speaking the link on its stdin and stdout (run by sh),\n"
    "                      e.g. exec:build/hil/host/link-target or exec:'qemu-ppc build/hil/ppc/link-target'\n"
    "  qemu-m7:ELF         the Cortex-M7 link image on QEMU's mps2-an500, its UART on a loopback TCP port\n"
    "  tcp:HOST:PORT       a link listening on a TCP port\n"
    "  serial:DEVICE:BAUD  a bench unit on a serial line (needs --allow-hardware)\n"
    "\n"
    "options:\n"
    "      --target T        the target (required)\n"
    "      --timeout S       seconds to wait for each answer, 0.1 to 3600 (default 20)\n"
    "      --retries N       runs more of a vector whose stream was damaged, 0 to 10 (default 2)\n"
    "      --junit FILE      also write a JUnit XML report\n"
    "      --allow-hardware  allow a serial target: bench units only, under the hardware handling rules\n"
    "      --inject-error N  flip one bit of the Nth octet sent (from 1): a test of the link's CRC\n"
    "  -q, --quiet           print only failures and the closing line\n"
    "  -h, --help            this text\n"
    "A target that reports a flight or locked mode is refused before anything is sent to it.\n"
    "exit status: 0 every vector passed (or did not fit the target), 1 a mismatch or a link failure, 2 usage\n"
    "example: tidelock hil --target exec:build/hil/host/link-target --junit hil.xml vectors\n";

/* ---- connection -------------------------------------------------------------- */

typedef struct conn {
    int rfd, wfd;
    pid_t pid;
    char errlog[64];          /* the child's stderr, shown when it fails */
    double timeout;
    tl_link_rx rx;
    uint8_t work[TL_LINK_MAX_BODY];
    uint8_t tx_work[TL_LINK_MAX_BODY];
    uint8_t wire[TL_LINK_MAX_WIRE];
    uint8_t rbuf[65536];
    size_t rat, rfill;
    uint16_t seq;
    int rx_known;
    uint16_t rx_next;
    uint64_t sent;
    uint64_t inject_at;       /* 0: none */
    /* counters */
    uint32_t bad_frames, naks, timeouts, gaps, resets;
    /* what the target said about itself */
    uint8_t mode;
    uint32_t fw_version, arith, max_points, max_taps, max_payload, table_cap;
} conn;

static double now_s(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int free_port(void)
{
    const int s = socket(AF_INET, SOCK_STREAM, 0);
    if (s < 0)
        return -1;
    struct sockaddr_in a;
    memset(&a, 0, sizeof a);
    a.sin_family = AF_INET;
    a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
    socklen_t l = sizeof a;
    int port = -1;
    if (bind(s, (struct sockaddr *)&a, sizeof a) == 0 && getsockname(s, (struct sockaddr *)&a, &l) == 0)
        port = ntohs(a.sin_port);
    close(s);
    return port;
}

static int tcp_connect(const char *host, int port, double wait_s)
{
    struct sockaddr_in a;
    memset(&a, 0, sizeof a);
    a.sin_family = AF_INET;
    a.sin_port = htons((uint16_t)port);
    if (inet_pton(AF_INET, host, &a.sin_addr) != 1)
        return -1;
    const double end = now_s() + wait_s;
    do {
        const int s = socket(AF_INET, SOCK_STREAM, 0);
        if (s < 0)
            return -1;
        if (connect(s, (struct sockaddr *)&a, sizeof a) == 0)
            return s;
        close(s);
        struct timespec ts = { 0, 50000000 };
        nanosleep(&ts, NULL);
    } while (now_s() < end);
    return -1;
}

/* Start argv with its stdin/stdout on pipes (or on nothing, for QEMU whose
 * link is a socket) and its stderr in a temporary file. */
static int spawn(conn *c, char *const argv[], int pipes)
{
    int in[2] = { -1, -1 }, out[2] = { -1, -1 };
    if (pipes && (pipe(in) != 0 || pipe(out) != 0))
        return -1;
    snprintf(c->errlog, sizeof c->errlog, "/tmp/tidelock-hil-XXXXXX");
    const int logfd = mkstemp(c->errlog);
    if (logfd < 0)
        return -1;
    c->pid = fork();
    if (c->pid < 0)
        return -1;
    if (c->pid == 0) {
        if (pipes) {
            dup2(in[0], 0);
            dup2(out[1], 1);
            close(in[1]);
            close(out[0]);
        } else {
            const int nul = open("/dev/null", O_RDWR);
            dup2(nul, 0);
            dup2(nul, 1);
        }
        dup2(logfd, 2);
        execvp(argv[0], argv);
        fprintf(stderr, "cannot run %s: %s\n", argv[0], strerror(errno));
        _exit(127);
    }
    close(logfd);
    if (pipes) {
        close(in[0]);
        close(out[1]);
        c->wfd = in[1];
        c->rfd = out[0];
    }
    return 0;
}

static speed_t baud_of(long b)
{
    static const struct {
        long b;
        speed_t s;
    } t[] = { { 9600, B9600 },     { 19200, B19200 },   { 38400, B38400 },   { 57600, B57600 },
              { 115200, B115200 }, { 230400, B230400 }, { 460800, B460800 }, { 921600, B921600 },
              { 1000000, B1000000 }, { 2000000, B2000000 }, { 3000000, B3000000 }, { 4000000, B4000000 } };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++)
        if (t[i].b == b)
            return t[i].s;
    return (speed_t)0;
}

/* Open the target; one line in err on failure. */
static int conn_open(conn *c, const char *target, int allow_hw, char *err, size_t cap)
{
    c->rfd = c->wfd = -1;
    c->pid = -1;
    c->errlog[0] = '\0';
    tl_link_rx_reset(&c->rx);
    if (strncmp(target, "exec:", 5) == 0 && target[5] != '\0') {
        char cmd[4200];
        snprintf(cmd, sizeof cmd, "exec %s", target + 5);
        char *argv[] = { "sh", "-c", cmd, NULL };
        if (spawn(c, argv, 1) != 0) {
            snprintf(err, cap, "--target %s: cannot start it: %s", target, strerror(errno));
            return -1;
        }
        return 0;
    }
    if (strncmp(target, "qemu-m7:", 8) == 0 && target[8] != '\0') {
        struct stat st;
        if (stat(target + 8, &st) != 0) {
            snprintf(err, cap, "--target %s: no such image", target);
            return -1;
        }
        const int port = free_port();
        char chardev[128], kernel[4200];
        snprintf(chardev, sizeof chardev, "socket,id=link,host=127.0.0.1,port=%d,server=on,wait=on", port);
        snprintf(kernel, sizeof kernel, "%s", target + 8);
        char *argv[] = { "qemu-system-arm", "-M", "mps2-an500", "-display", "none", "-monitor", "none",
                         "-semihosting-config", "enable=on,target=native", "-chardev", chardev,
                         "-serial", "chardev:link", "-kernel", kernel, NULL };
        if (port < 0 || spawn(c, argv, 0) != 0) {
            snprintf(err, cap, "--target %s: cannot start qemu-system-arm", target);
            return -1;
        }
        const int s = tcp_connect("127.0.0.1", port, 10.0);
        if (s < 0) {
            snprintf(err, cap, "--target %s: QEMU's UART port %d did not accept a connection within 10 s", target,
                     port);
            return -1;
        }
        c->rfd = c->wfd = s;
        return 0;
    }
    if (strncmp(target, "tcp:", 4) == 0) {
        char host[256];
        const char *colon = strrchr(target + 4, ':');
        char *end = NULL;
        const long port = colon != NULL ? strtol(colon + 1, &end, 10) : 0;
        if (colon == NULL || (size_t)(colon - target - 4) >= sizeof host || end == colon + 1 || *end != '\0' ||
            port < 1 || port > 65535) {
            snprintf(err, cap, "--target %s: expected tcp:HOST:PORT with a numeric IPv4 HOST and PORT 1 to 65535",
                     target);
            return -1;
        }
        memcpy(host, target + 4, (size_t)(colon - target - 4));
        host[colon - target - 4] = '\0';
        const int s = tcp_connect(host, (int)port, 0.0);
        if (s < 0) {
            snprintf(err, cap, "--target %s: cannot connect: %s", target, strerror(errno));
            return -1;
        }
        c->rfd = c->wfd = s;
        return 0;
    }
    if (strncmp(target, "serial:", 7) == 0) {
        char dev[4096];
        const char *colon = strrchr(target + 7, ':');
        char *end = NULL;
        const long baud = colon != NULL ? strtol(colon + 1, &end, 10) : 0;
        if (colon == NULL || (size_t)(colon - target - 7) >= sizeof dev || end == colon + 1 || *end != '\0' ||
            baud_of(baud) == (speed_t)0) {
            snprintf(err, cap, "--target %s: expected serial:DEVICE:BAUD, BAUD one of 9600 .. 4000000", target);
            return -1;
        }
        if (!allow_hw) {
            snprintf(err, cap, "--target %s: a serial target is real hardware: add --allow-hardware (bench units "
                               "only, under the project's hardware handling rules)",
                     target);
            return -1;
        }
        memcpy(dev, target + 7, (size_t)(colon - target - 7));
        dev[colon - target - 7] = '\0';
        const int fd = open(dev, O_RDWR | O_NOCTTY);
        struct termios t;
        if (fd < 0 || tcgetattr(fd, &t) != 0) {
            snprintf(err, cap, "--target %.300s: cannot open %.300s as a serial line: %s", target, dev, strerror(errno));
            if (fd >= 0)
                close(fd);
            return -1;
        }
        cfmakeraw(&t);
        cfsetispeed(&t, baud_of(baud));
        cfsetospeed(&t, baud_of(baud));
        t.c_cflag |= CLOCAL | CREAD;
        if (tcsetattr(fd, TCSANOW, &t) != 0) {
            snprintf(err, cap, "--target %s: cannot set %ld baud: %s", target, baud, strerror(errno));
            close(fd);
            return -1;
        }
        tcflush(fd, TCIOFLUSH);
        c->rfd = c->wfd = fd;
        return 0;
    }
    snprintf(err, cap, "--target '%s': expected exec:COMMAND, qemu-m7:ELF, tcp:HOST:PORT or serial:DEVICE:BAUD",
             target);
    return -1;
}

/* The last line the target's process wrote on stderr ("" if none). */
static void child_said(const conn *c, char *out, size_t cap)
{
    out[0] = '\0';
    FILE *f = c->errlog[0] ? fopen(c->errlog, "r") : NULL;
    if (f == NULL)
        return;
    char line[512];
    while (fgets(line, sizeof line, f) != NULL)
        if (line[0] != '\n') {
            line[strcspn(line, "\n")] = '\0';
            snprintf(out, cap, "%s", line);
        }
    fclose(f);
}

static void conn_close(conn *c)
{
    if (c->wfd >= 0 && c->wfd != c->rfd)
        close(c->wfd);
    if (c->rfd >= 0)
        close(c->rfd);
    c->rfd = c->wfd = -1;
    if (c->pid > 0) {
        int st;
        for (int i = 0; i < 20 && waitpid(c->pid, &st, WNOHANG) == 0; i++) {
            if (i == 2)
                kill(c->pid, SIGTERM);
            struct timespec ts = { 0, 50000000 };
            nanosleep(&ts, NULL);
        }
        if (waitpid(c->pid, &st, WNOHANG) == 0) {
            kill(c->pid, SIGKILL);
            waitpid(c->pid, &st, 0);
        }
        c->pid = -1;
    }
    if (c->errlog[0])
        unlink(c->errlog);
}

/* Send one message (fault injection applies here). 0 or -1. */
static int send_msg(conn *c, uint8_t type, uint16_t seq, const uint8_t *p, size_t n)
{
    size_t len = 0;
    if (tl_link_encode(type, seq, p, n, c->tx_work, sizeof c->tx_work, c->wire, sizeof c->wire, &len) != TL_OK)
        return -1;
    if (c->inject_at > c->sent && c->inject_at <= c->sent + len)
        c->wire[c->inject_at - c->sent - 1u] ^= 0x10u;
    c->sent += len;
    for (size_t done = 0; done < len;) {
        const ssize_t w = write(c->wfd, c->wire + done, len - done);
        if (w < 0 && errno == EINTR)
            continue;
        if (w <= 0)
            return -1;
        done += (size_t)w;
    }
    return 0;
}

enum { RX_GOT = 0, RX_TIMEOUT = -1, RX_EOF = -2 };

/* The next message that checks out, until `deadline`. */
static int recv_msg(conn *c, double deadline, tl_link_msg *m)
{
    for (;;) {
        while (c->rat < c->rfill) {
            if (!tl_link_rx_put(&c->rx, c->rbuf[c->rat++]))
                continue;
            if (tl_link_decode(c->rx.buf, c->rx.fill, c->work, sizeof c->work, m) != TL_OK) {
                c->bad_frames++;
                continue;
            }
            if (c->rx_known && m->seq != c->rx_next)
                c->gaps++;
            c->rx_known = 1;
            c->rx_next = (uint16_t)(m->seq + 1u);
            return RX_GOT;
        }
        const double left = deadline - now_s();
        if (left <= 0)
            return RX_TIMEOUT;
        struct pollfd p = { c->rfd, POLLIN, 0 };
        const int r = poll(&p, 1, (int)(left * 1000.0) + 1);
        if (r < 0 && errno == EINTR)
            continue;
        if (r == 0)
            continue;
        const ssize_t got = read(c->rfd, c->rbuf, sizeof c->rbuf);
        if (got < 0 && errno == EINTR)
            continue;
        if (got <= 0)
            return RX_EOF;
        c->rat = 0;
        c->rfill = (size_t)got;
    }
}

/* Output collected from FRAMES messages. */
typedef struct outbuf {
    uint8_t *p;
    size_t len, cap;
} outbuf;

static int out_put(outbuf *o, const uint8_t *d, size_t n)
{
    if (o->len + n > o->cap) {
        size_t cap = o->cap ? o->cap * 2u : 65536u;
        while (cap < o->len + n)
            cap *= 2u;
        uint8_t *q = realloc(o->p, cap);
        if (q == NULL)
            return -1;
        o->p = q;
        o->cap = cap;
    }
    memcpy(o->p + o->len, d, n);
    o->len += n;
    return 0;
}

enum { T_DONE = 0, T_REFUSED = 1, T_RESET = 2, T_LOST = 3 };

typedef struct answer {
    uint8_t type;
    uint8_t payload[TL_LINK_STATUS_OCTETS];
    size_t len;
} answer;

#define MAX_RESENDS 5

/* Send a message and wait for its answer, resending on NAK or silence;
 * FRAMES on the way go to out (may be NULL). Returns T_DONE (ACK or
 * STATUS), T_REFUSED (ERROR: in a), T_RESET (the target started up
 * again), or T_LOST (no usable answer; why in err). */
static int transact(conn *c, uint8_t type, const uint8_t *p, size_t n, outbuf *out, answer *a, char *err, size_t cap)
{
    const uint16_t seq = c->seq++;
    int resends = 0;
    if (send_msg(c, type, seq, p, n) != 0) {
        snprintf(err, cap, "cannot send to the target (it closed the link)");
        return T_LOST;
    }
    for (;;) {
        tl_link_msg m;
        const int r = recv_msg(c, now_s() + c->timeout, &m);
        if (r == RX_EOF) {
            snprintf(err, cap, "the target closed the link");
            return T_LOST;
        }
        if (r == RX_TIMEOUT) {
            c->timeouts++;
            if (++resends > MAX_RESENDS) {
                snprintf(err, cap, "no answer within %.3g s, %d times", c->timeout, MAX_RESENDS + 1);
                return T_LOST;
            }
            if (send_msg(c, type, seq, p, n) != 0) {
                snprintf(err, cap, "cannot send to the target (it closed the link)");
                return T_LOST;
            }
            continue;
        }
        switch (m.type) {
        case TL_LINK_T_FRAMES:
            if (out != NULL && out_put(out, m.payload, m.len) != 0) {
                snprintf(err, cap, "out of memory");
                return T_LOST;
            }
            break;
        case TL_LINK_T_NAK:
            c->naks++;
            if (++resends > MAX_RESENDS) {
                snprintf(err, cap, "the target refused the message %d times (NAK)", MAX_RESENDS + 1);
                return T_LOST;
            }
            if (send_msg(c, type, seq, p, n) != 0) {
                snprintf(err, cap, "cannot send to the target (it closed the link)");
                return T_LOST;
            }
            break;
        case TL_LINK_T_STATUS:
            if (m.len >= 5u && m.payload[4] == 1u) { /* start-up announcement */
                if (type == TL_LINK_T_HELLO)
                    break; /* expected at the start; the answer follows */
                c->resets++;
                return T_RESET;
            }
            /* fall through */
        case TL_LINK_T_ACK:
        case TL_LINK_T_ERROR:
            if (m.len < 2u || tl_get_be16(m.payload) != seq)
                break; /* an answer to an earlier message, repeated */
            a->type = m.type;
            a->len = m.len < sizeof a->payload ? m.len : sizeof a->payload;
            memcpy(a->payload, m.payload, a->len);
            return m.type == TL_LINK_T_ERROR ? T_REFUSED : T_DONE;
        default:
            break;
        }
    }
}

/* ---- one vector ----------------------------------------------------------------- */

typedef struct vec_result {
    char name[256];
    int verdict;          /* 0 pass, 1 fail, 2 not applicable */
    char why[1400];
    double seconds;
    uint32_t frames, retries;
} vec_result;

static uint8_t *read_all(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return NULL;
    uint8_t *b = NULL;
    size_t n = 0, cap = 0;
    for (;;) {
        if (n == cap) {
            cap = cap ? cap * 2u : 65536u;
            uint8_t *q = realloc(b, cap);
            if (q == NULL) {
                free(b);
                fclose(f);
                return NULL;
            }
            b = q;
        }
        const size_t r = fread(b + n, 1, cap - n, f);
        n += r;
        if (r == 0)
            break;
    }
    const int bad = ferror(f);
    fclose(f);
    if (bad) {
        free(b);
        return NULL;
    }
    *len = n;
    return b;
}

static const char *refusal(const answer *a, char *buf, size_t cap)
{
    const tl_status st = a->len >= 4u ? (tl_status)tl_get_be16(a->payload + 2) : TL_E_FORMAT;
    const uint32_t detail = a->len >= 8u ? tl_get_be32(a->payload + 4) : 0u;
    snprintf(buf, cap, "%s (%s), detail %u", tl_status_text(st), tl_status_name(st), (unsigned)detail);
    return buf;
}

static void run_vector(conn *c, const char *dir, int retries, vec_result *res)
{
    memset(res, 0, sizeof *res);
    const char *base = strrchr(dir, '/');
    snprintf(res->name, sizeof res->name, "%s", base != NULL && base[1] ? base + 1 : dir);
    const double t0 = now_s();
    char path[4400];
    size_t sl = 0, tl = 0, nl = 0, el = 0;
    snprintf(path, sizeof path, "%s/setup.bin", dir);
    uint8_t *setup = read_all(path, &sl);
    snprintf(path, sizeof path, "%s/taps.bin", dir);
    uint8_t *taps = read_all(path, &tl);
    snprintf(path, sizeof path, "%s/samples.bin", dir);
    uint8_t *samples = read_all(path, &nl);
    snprintf(path, sizeof path, "%s/frames.bin", dir);
    uint8_t *expect = read_all(path, &el);
    tl_link_setup su;
    uint32_t bad = 0;
    outbuf out = { 0 };
    res->verdict = 1;
    if (setup == NULL || samples == NULL || expect == NULL) {
        snprintf(res->why, sizeof res->why, "%s: missing setup.bin, samples.bin or frames.bin", dir);
        goto done;
    }
    const tl_status st = tl_link_setup_decode(setup, sl, &su, &bad);
    if (st != TL_OK) {
        snprintf(res->why, sizeof res->why, "%s/setup.bin: field %s (octet %u): %s", dir,
                 tl_link_setup_field_name(bad), (unsigned)bad, tl_status_text(st));
        goto done;
    }
    if (su.chain.points > c->max_points || su.chain.taps > c->max_taps || (taps != NULL && tl > c->table_cap)) {
        res->verdict = 2;
        snprintf(res->why, sizeof res->why, "needs %u points and %u taps; the target holds %u and %u",
                 (unsigned)su.chain.points, (unsigned)su.chain.taps, (unsigned)c->max_points,
                 (unsigned)c->max_taps);
        goto done;
    }
    const size_t set = 2u * (su.chain.inputs == 2u ? 2u : 1u);
    const size_t chunk = (c->max_payload / set) * set;
    for (uint32_t attempt = 0; attempt <= (uint32_t)retries; attempt++) {
        res->retries = attempt;
        out.len = 0;
        answer a;
        char err[512] = "";
        int r = transact(c, TL_LINK_T_RESET, NULL, 0, NULL, &a, err, sizeof err);
        for (size_t off = 0; r == T_DONE && taps != NULL && off < tl;) {
            uint8_t msg[TL_LINK_MAX_PAYLOAD];
            const size_t k = tl - off < c->max_payload - 8u ? tl - off : c->max_payload - 8u;
            tl_put_be32(msg, (uint32_t)off);
            tl_put_be32(msg + 4, (uint32_t)tl);
            memcpy(msg + 8, taps + off, k);
            r = transact(c, TL_LINK_T_TABLE, msg, 8u + k, NULL, &a, err, sizeof err);
            off += k;
        }
        if (r == T_DONE) {
            uint8_t msg[4u + TL_LINK_SETUP_OCTETS];
            tl_put_be32(msg, taps != NULL ? (uint32_t)tl : 0u);
            memcpy(msg + 4, setup, TL_LINK_SETUP_OCTETS);
            r = transact(c, TL_LINK_T_CONFIG, msg, sizeof msg, &out, &a, err, sizeof err);
        }
        for (size_t off = 0; r == T_DONE && off < nl; off += chunk)
            r = transact(c, TL_LINK_T_SAMPLES, samples + off, nl - off < chunk ? nl - off : chunk, &out, &a, err,
                         sizeof err);
        if (r == T_DONE)
            r = transact(c, TL_LINK_T_END, NULL, 0, &out, &a, err, sizeof err);
        if (r == T_REFUSED) {
            char b[256];
            snprintf(res->why, sizeof res->why, "the target refused it: %s", refusal(&a, b, sizeof b));
            goto done;
        }
        if (r == T_LOST) {
            char said[512];
            child_said(c, said, sizeof said);
            snprintf(res->why, sizeof res->why, "link failed: %s%s%s", err, said[0] ? "; the target said: " : "",
                     said);
            goto done;
        }
        /* the END answer counts the frames sent: all of them must have come */
        const size_t wire = TL_FRAME_WIRE_LEN(su.frame_len);
        const uint32_t reported = r == T_DONE && a.len >= 10u ? tl_get_be32(a.payload + 6) : 0u;
        if (r == T_RESET || out.len != (size_t)reported * wire) {
            snprintf(res->why, sizeof res->why, "%s in every one of %u runs",
                     r == T_RESET ? "the target started up again" : "frames from the target were lost or damaged",
                     (unsigned)attempt + 1u);
            /* a restarted target needs a HELLO before it takes messages in order again */
            if (r == T_RESET && transact(c, TL_LINK_T_HELLO, NULL, 0, NULL, &a, err, sizeof err) != T_DONE)
                goto done;
            continue;
        }
        res->frames = (uint32_t)(out.len / TL_FRAME_WIRE_LEN(su.frame_len));
        if (out.len != el || (el > 0u && memcmp(out.p, expect, el) != 0)) {
            char why[1024];
            tl_vectors_describe(expect, el, out.p, out.len, su.frame_len, why, sizeof why);
            snprintf(res->why, sizeof res->why, "frame stream differs from %s/frames.bin: %s", dir, why);
            goto done;
        }
        res->verdict = 0;
        res->why[0] = '\0';
        break;
    }
done:
    res->seconds = now_s() - t0;
    free(setup);
    free(taps);
    free(samples);
    free(expect);
    free(out.p);
}

/* ---- reports ------------------------------------------------------------------- */

static void xml_text(FILE *f, const char *s)
{
    for (; *s; s++) {
        switch (*s) {
        case '&': fputs("&amp;", f); break;
        case '<': fputs("&lt;", f); break;
        case '>': fputs("&gt;", f); break;
        case '"': fputs("&quot;", f); break;
        default:
            if ((unsigned char)*s >= 0x20u)
                fputc(*s, f);
        }
    }
}

typedef struct junit {
    const char *target;
    const vec_result *r;
    size_t n;
    double seconds;
} junit;

static int write_junit(FILE *f, void *ctx)
{
    const junit *j = ctx;
    size_t failed = 0, skipped = 0;
    for (size_t i = 0; i < j->n; i++) {
        failed += j->r[i].verdict == 1;
        skipped += j->r[i].verdict == 2;
    }
    fputs("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites>\n  <testsuite name=\"tidelock hil ", f);
    xml_text(f, j->target);
    fprintf(f, "\" tests=\"%zu\" failures=\"%zu\" errors=\"0\" skipped=\"%zu\" time=\"%.3f\">\n", j->n, failed,
            skipped, j->seconds);
    for (size_t i = 0; i < j->n; i++) {
        fputs("    <testcase classname=\"hil\" name=\"", f);
        xml_text(f, j->r[i].name);
        fprintf(f, "\" time=\"%.3f\"", j->r[i].seconds);
        if (j->r[i].verdict == 0) {
            fputs("/>\n", f);
            continue;
        }
        fputs(j->r[i].verdict == 1 ? ">\n      <failure message=\"" : ">\n      <skipped message=\"", f);
        xml_text(f, j->r[i].why);
        fputs("\"/>\n    </testcase>\n", f);
    }
    fputs("  </testsuite>\n</testsuites>\n", f);
    return ferror(f) ? -1 : 0;
}

/* Expand the arguments: a folder with setup.bin is a vector; a folder
 * with a manifest.json stands for its vectors. */
typedef struct strv {
    char **v;
    size_t n, cap;
} strv;

static int strv_add(strv *s, const char *text)
{
    if (s->n == s->cap) {
        const size_t cap = s->cap ? s->cap * 2u : 16u;
        char **q = realloc(s->v, cap * sizeof *q);
        if (q == NULL)
            return -1;
        s->v = q;
        s->cap = cap;
    }
    s->v[s->n] = strdup(text);
    return s->v[s->n++] != NULL ? 0 : -1;
}

static void strv_free(strv *s)
{
    for (size_t i = 0; i < s->n; i++)
        free(s->v[i]);
    free(s->v);
    memset(s, 0, sizeof *s);
}

static int expand(char **args, int n, strv *out, char *err, size_t cap)
{
    for (int i = 0; i < n; i++) {
        char p[4400];
        struct stat st;
        snprintf(p, sizeof p, "%s/setup.bin", args[i]);
        if (stat(p, &st) == 0) {
            if (strv_add(out, args[i]) != 0)
                goto oom;
            continue;
        }
        snprintf(p, sizeof p, "%s/%s", args[i], TL_VECTORS_MANIFEST);
        json_error_t je;
        json_t *m = json_load_file(p, 0, &je);
        json_t *list = m != NULL ? json_object_get(m, "vectors") : NULL;
        if (!json_is_array(list)) {
            snprintf(err, cap, "%.600s: neither a vector (no setup.bin) nor a folder of vectors (no usable %s)",
                     args[i], TL_VECTORS_MANIFEST);
            json_decref(m);
            return -1;
        }
        for (size_t j = 0; j < json_array_size(list); j++) {
            const char *name = json_string_value(json_object_get(json_array_get(list, j), "name"));
            if (name == NULL)
                continue;
            char q[4400];
            snprintf(q, sizeof q, "%s/%s", args[i], name);
            if (strv_add(out, q) != 0) {
                json_decref(m);
                goto oom;
            }
        }
        json_decref(m);
    }
    return 0;
oom:
    snprintf(err, cap, "out of memory");
    return -1;
}

int tl_cmd_hil(int argc, char **argv)
{
    static const struct option opts[] = { { "target", required_argument, NULL, 't' },
                                          { "timeout", required_argument, NULL, 'T' },
                                          { "retries", required_argument, NULL, 'r' },
                                          { "junit", required_argument, NULL, 'j' },
                                          { "allow-hardware", no_argument, NULL, 'A' },
                                          { "inject-error", required_argument, NULL, 'i' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *target = NULL, *junit_path = NULL;
    double timeout = 20.0;
    long retries = 2;
    unsigned long long inject = 0;
    int allow_hw = 0, quiet = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":qh", opts, NULL)) != -1) {
        char *end = NULL;
        switch (c) {
        case 't': target = optarg; break;
        case 'T':
            timeout = strtod(optarg, &end);
            if (end == optarg || *end != '\0' || !(timeout >= 0.1 && timeout <= 3600.0))
                return tl_cli_usage("hil", "--timeout: '%s' is not a number of seconds from 0.1 to 3600", optarg);
            break;
        case 'r':
            retries = strtol(optarg, &end, 10);
            if (end == optarg || *end != '\0' || retries < 0 || retries > 10)
                return tl_cli_usage("hil", "--retries: '%s' is not a whole number from 0 to 10", optarg);
            break;
        case 'j': junit_path = optarg; break;
        case 'A': allow_hw = 1; break;
        case 'i':
            inject = strtoull(optarg, &end, 10);
            if (end == optarg || *end != '\0' || optarg[0] == '-' || inject < 1)
                return tl_cli_usage("hil", "--inject-error: '%s' is not an octet number from 1", optarg);
            break;
        case 'q': quiet = 1; break;
        case 'h': fputs(hil_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("hil", argv, c);
        }
    }
    if (target == NULL)
        return tl_cli_usage("hil", "--target is required%s", "");
    if (optind >= argc)
        return tl_cli_usage("hil", "expected at least one VECTOR folder%s", "");
    if (strncmp(target, "exec:", 5) != 0 && strncmp(target, "qemu-m7:", 8) != 0 && strncmp(target, "tcp:", 4) != 0 &&
        strncmp(target, "serial:", 7) != 0)
        return tl_cli_usage("hil", "--target '%s': expected exec:COMMAND, qemu-m7:ELF, tcp:HOST:PORT or "
                                   "serial:DEVICE:BAUD",
                            target);
    char err[1024];
    strv vs = { 0 };
    if (expand(argv + optind, argc - optind, &vs, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock hil: %s\n", err);
        strv_free(&vs);
        return EXIT_FAIL;
    }
    char **vecs = vs.v;
    const size_t nv = vs.n;
    signal(SIGPIPE, SIG_IGN);
    conn *cn = calloc(1, sizeof *cn);
    vec_result *res = calloc(nv > 0 ? nv : 1u, sizeof *res);
    if (cn == NULL || res == NULL) {
        fprintf(stderr, "tidelock hil: out of memory\n");
        free(cn);
        free(res);
        strv_free(&vs);
        return EXIT_FAIL;
    }
    cn->timeout = timeout;
    cn->inject_at = inject;
    const double t0 = now_s();
    int rc = EXIT_FAIL;
    if (conn_open(cn, target, allow_hw, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock hil: %s\n", err);
        goto out;
    }
    answer a;
    const int hr = transact(cn, TL_LINK_T_HELLO, NULL, 0, NULL, &a, err, sizeof err);
    if (hr != T_DONE || a.type != TL_LINK_T_STATUS || a.len < TL_LINK_STATUS_OCTETS) {
        char said[512];
        child_said(cn, said, sizeof said);
        fprintf(stderr, "tidelock hil: --target %s: no status from the target (%s)%s%s\n", target,
                hr == T_LOST ? err : "not a status answer", said[0] ? "; it said: " : "", said);
        goto out;
    }
    const uint8_t version = a.payload[2];
    cn->mode = a.payload[3];
    cn->fw_version = tl_get_be32(a.payload + 6);
    cn->arith = tl_get_be32(a.payload + 10);
    cn->max_points = tl_get_be32(a.payload + 14);
    cn->max_taps = tl_get_be32(a.payload + 18);
    cn->max_payload = tl_get_be32(a.payload + 22);
    cn->table_cap = tl_get_be32(a.payload + 26);
    if (version != TL_LINK_VERSION) {
        fprintf(stderr, "tidelock hil: --target %s: link protocol version %u, this tidelock speaks %u\n", target,
                version, TL_LINK_VERSION);
        goto out;
    }
    if (cn->mode != TL_LINK_MODE_BENCH) {
        fprintf(stderr,
                "tidelock hil: --target %s: the unit reports %s mode: refusing to send it a table, a "
                "configuration or samples (bench units only)\n",
                target, cn->mode == TL_LINK_MODE_FLIGHT ? "flight" : cn->mode == TL_LINK_MODE_LOCKED ? "locked"
                                                                                                       : "an unknown");
        goto out;
    }
    if (cn->max_payload < 64u || cn->max_payload > TL_LINK_MAX_PAYLOAD) {
        fprintf(stderr, "tidelock hil: --target %s: its largest message, %u octets, is outside 64 .. %u\n", target,
                (unsigned)cn->max_payload, TL_LINK_MAX_PAYLOAD);
        goto out;
    }
    if (!quiet)
        printf("hil: %s: bench unit, firmware %u.%u.%u, arithmetic spec %u, at most %u points and %u taps\n",
               target, (unsigned)(cn->fw_version >> 16), (unsigned)((cn->fw_version >> 8) & 0xFFu),
               (unsigned)(cn->fw_version & 0xFFu), (unsigned)cn->arith, (unsigned)cn->max_points,
               (unsigned)cn->max_taps);
    size_t passed = 0, failed = 0, na = 0;
    for (size_t i = 0; i < nv; i++) {
        run_vector(cn, vecs[i], (int)retries, &res[i]);
        const vec_result *r = &res[i];
        passed += r->verdict == 0;
        failed += r->verdict == 1;
        na += r->verdict == 2;
        if (r->verdict == 1)
            printf("FAIL %-24s %s\n", r->name, r->why);
        else if (!quiet && r->verdict == 2)
            printf("N/A  %-24s %s\n", r->name, r->why);
        else if (!quiet)
            printf("PASS %-24s %4u frames %7.2f s%s\n", r->name, (unsigned)r->frames, r->seconds,
                   r->retries ? " (run again after a damaged stream)" : "");
        fflush(stdout);
    }
    const double total = now_s() - t0;
    printf("hil: %zu passed, %zu failed, %zu not applicable in %.1f s (link: %u NAKs, %u timeouts, %u damaged frames "
           "skipped, %u lost messages, %u target restarts)\n",
           passed, failed, na, total, (unsigned)cn->naks, (unsigned)cn->timeouts, (unsigned)cn->bad_frames,
           (unsigned)cn->gaps, (unsigned)cn->resets);
    rc = failed == 0 ? EXIT_OK : EXIT_FAIL;
    if (junit_path != NULL) {
        junit j = { target, res, nv, total };
        if (tl_atomic_write(junit_path, write_junit, &j, err, sizeof err) != 0) {
            fprintf(stderr, "tidelock hil: %s\n", err);
            rc = EXIT_FAIL;
        }
    }
out:
    conn_close(cn);
    strv_free(&vs);
    free(cn);
    free(res);
    return rc;
}
