/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* SCPI (IEEE 488.2 messages, newline-terminated) over a raw TCP socket (the LXI convention),
** a serial line (termios, 8N1, raw) or a Linux USBTMC device file.  Every command is followed
** by "SYST:ERR?", which must answer 0.  Replies are read with a timeout; nothing blocks
** longer than that. */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <netdb.h>
#include <poll.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <termios.h>
#include <time.h>
#include <unistd.h>

#include "bandgap/bandgap.h"
#include "../core/num_int.h"

struct bg_scpi {
    int fd;
    bg_transport tr;
    bg_role role;
    double timeout_s;
    char where[300];     /* "127.0.0.1:5025", "/dev/ttyUSB0" */
    char buf[1024];      /* bytes read past the last reply */
    size_t nbuf;
};

static int lost(bg_scpi *s, bg_error *err, const char *what, const char *cmd)
{
    return bg_error_set(err, BG_EUNAVAIL, "instrument '%s' (%s): %s%s%s%s",
                        bg_role_name(s->role), s->where, what, cmd ? " '" : "",
                        cmd ? cmd : "", cmd ? "'" : "");
}

static double mono(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Wait until 'fd' is ready for 'events' before 'deadline'; 0 ready, -1 timed out or failed. */
static int ready(int fd, short events, double deadline)
{
    for (;;) {
        double left = deadline - mono();
        if (left <= 0.0)
            return -1;
        struct pollfd p = { fd, events, 0 };
        int n = poll(&p, 1, (int)ceil(left * 1000.0));
        if (n > 0)
            return (p.revents & (events | POLLHUP | POLLERR)) ? 0 : -1;
        if (n < 0 && errno != EINTR)
            return -1;
    }
}

static int tcp_connect(bg_scpi *s, const bg_instr *in, bg_error *err)
{
    struct addrinfo hints, *res = NULL;
    char port[16];
    memset(&hints, 0, sizeof hints);
    hints.ai_family = AF_UNSPEC;
    hints.ai_socktype = SOCK_STREAM;
    snprintf(port, sizeof port, "%d", in->port);
    snprintf(s->where, sizeof s->where, "%s:%d", in->host, in->port);
    if (getaddrinfo(in->host, port, &hints, &res) != 0 || !res)
        return lost(s, err, "host not found", NULL);
    int rc = -1;
    for (struct addrinfo *a = res; a && rc < 0; a = a->ai_next) {
        int fd = socket(a->ai_family, a->ai_socktype, a->ai_protocol);
        if (fd < 0)
            continue;
        fcntl(fd, F_SETFL, fcntl(fd, F_GETFL) | O_NONBLOCK);
        int c = connect(fd, a->ai_addr, a->ai_addrlen);
        if (c != 0 && errno == EINPROGRESS &&
            ready(fd, POLLOUT, mono() + in->timeout_s) == 0) {
            int e = 0;
            socklen_t len = sizeof e;
            c = getsockopt(fd, SOL_SOCKET, SO_ERROR, &e, &len) == 0 && e == 0 ? 0 : -1;
        }
        if (c == 0)
            s->fd = fd, rc = 0;
        else
            close(fd);
    }
    freeaddrinfo(res);
    return rc == 0 ? BG_OK : lost(s, err, "cannot connect", NULL);
}

static speed_t baud_of(int baud)
{
    static const struct { int b; speed_t s; } t[] = {
        { 1200, B1200 }, { 2400, B2400 }, { 4800, B4800 }, { 9600, B9600 },
        { 19200, B19200 }, { 38400, B38400 }, { 57600, B57600 }, { 115200, B115200 },
        { 230400, B230400 } };
    for (size_t i = 0; i < sizeof t / sizeof t[0]; i++)
        if (t[i].b == baud)
            return t[i].s;
    return 0;
}

static int serial_open(bg_scpi *s, const bg_instr *in, bg_error *err)
{
    struct termios tio;
    speed_t sp = baud_of(in->baud);
    if (!sp)
        return bg_error_set(err, BG_EINVAL, "instrument '%s': %d baud is not a standard rate "
                            "(1200 to 230400)", bg_role_name(s->role), in->baud);
    if ((s->fd = open(in->device, O_RDWR | O_NOCTTY | O_NONBLOCK)) < 0)
        return lost(s, err, strerror(errno), NULL);
    if (tcgetattr(s->fd, &tio) != 0)
        return lost(s, err, "not a serial line", NULL);
    /* raw 8N1, no flow control (what cfmakeraw sets, spelled out for POSIX) */
    tio.c_iflag &= ~(tcflag_t)(IGNBRK | BRKINT | PARMRK | ISTRIP | INLCR | IGNCR | ICRNL | IXON);
    tio.c_oflag &= ~(tcflag_t)OPOST;
    tio.c_lflag &= ~(tcflag_t)(ECHO | ECHONL | ICANON | ISIG | IEXTEN);
    tio.c_cflag &= ~(tcflag_t)(CSIZE | PARENB | CSTOPB);
    tio.c_cflag |= CS8 | CREAD | CLOCAL;
    tio.c_cc[VMIN] = 1;
    tio.c_cc[VTIME] = 0;
    if (cfsetispeed(&tio, sp) != 0 || cfsetospeed(&tio, sp) != 0 ||
        tcsetattr(s->fd, TCSANOW, &tio) != 0)
        return lost(s, err, "cannot set the line's parameters", NULL);
    tcflush(s->fd, TCIOFLUSH);
    return BG_OK;
}

int bg_scpi_open(const bg_instr *in, bg_role role, bg_scpi **out, bg_error *err)
{
    bg_scpi *s = calloc(1, sizeof *s);
    int rc;
    *out = NULL;
    if (!s)
        return bg_error_set(err, BG_ENOMEM, "out of memory");
    s->fd = -1, s->tr = in->transport, s->role = role, s->timeout_s = in->timeout_s;
    snprintf(s->where, sizeof s->where, "%s", in->device);
    if (in->transport == BG_TR_TCP)
        rc = tcp_connect(s, in, err);
    else if (in->transport == BG_TR_SERIAL)
        rc = serial_open(s, in, err);
    /* the Linux USBTMC driver answers a read with a transfer of its own (with the driver's
    ** timeout) and does not signal POLLIN: that file is read and written blocking */
    else if ((s->fd = open(in->device, O_RDWR)) < 0)
        rc = lost(s, err, strerror(errno), NULL);
    else
        rc = BG_OK;
    if (rc != BG_OK) {
        bg_scpi_close(s);
        return rc;
    }
    *out = s;
    return BG_OK;
}

void bg_scpi_close(bg_scpi *s)
{
    if (!s)
        return;
    if (s->fd >= 0)
        close(s->fd);
    free(s);
}

static int send_line(bg_scpi *s, const char *cmd, bg_error *err)
{
    char line[BG_SEQ_CMD + 64];
    int n = snprintf(line, sizeof line, "%s\n", cmd);
    size_t len = (size_t)n, off = 0;
    double deadline = mono() + s->timeout_s;
    if (n < 0 || len >= sizeof line)
        return bg_error_set(err, BG_EINVAL, "command '%s' too long", cmd);
    while (off < len) {
        if (s->tr != BG_TR_USBTMC && ready(s->fd, POLLOUT, deadline) != 0)
            return lost(s, err, "cannot send", cmd);
        ssize_t w = s->tr == BG_TR_TCP ? send(s->fd, line + off, len - off, MSG_NOSIGNAL)
                                       : write(s->fd, line + off, len - off);
        if (w < 0 && (errno == EAGAIN || errno == EINTR))
            continue;
        if (w <= 0)
            return lost(s, err, "connection lost sending", cmd);
        off += (size_t)w;
    }
    return BG_OK;
}

/* One reply line (LF or CR LF ended) into 'reply'. */
static int read_line(bg_scpi *s, const char *cmd, char *reply, size_t size, bg_error *err)
{
    double deadline = mono() + s->timeout_s;
    for (;;) {
        char *nl = memchr(s->buf, '\n', s->nbuf);
        if (nl) {
            size_t n = (size_t)(nl - s->buf), used = n + 1;
            if (n && s->buf[n - 1] == '\r')
                n--;
            if (n >= size)
                return lost(s, err, "reply too long to", cmd);
            memcpy(reply, s->buf, n);
            reply[n] = '\0';
            memmove(s->buf, s->buf + used, s->nbuf - used);
            s->nbuf -= used;
            if (bg_text_check("reply", reply, n, NULL) != BG_OK)
                return lost(s, err, "garbled reply (control characters or invalid UTF-8) "
                            "to", cmd);
            return BG_OK;
        }
        if (s->nbuf == sizeof s->buf)
            return lost(s, err, "reply without an end of line to", cmd);
        if (s->tr != BG_TR_USBTMC && ready(s->fd, POLLIN, deadline) != 0) {
            char what[64];
            snprintf(what, sizeof what, "no reply within %g s to", s->timeout_s);
            return lost(s, err, what, cmd);
        }
        ssize_t r = read(s->fd, s->buf + s->nbuf, sizeof s->buf - s->nbuf);
        if (r < 0 && (errno == EAGAIN || errno == EINTR))
            continue;
        if (r <= 0)
            return lost(s, err, "connection closed waiting for the reply to", cmd);
        s->nbuf += (size_t)r;
    }
}

int bg_scpi_cmd(bg_scpi *s, const char *cmd, char *reply, size_t size, bg_error *err)
{
    char e[256];
    size_t n = strlen(cmd);
    int rc = send_line(s, cmd, err);
    if (rc == BG_OK && n && cmd[n - 1] == '?') {
        char scratch[256];
        rc = read_line(s, cmd, reply ? reply : scratch, reply ? size : sizeof scratch, err);
    }
    if (rc == BG_OK)
        rc = send_line(s, "SYST:ERR?", err);
    if (rc == BG_OK)
        rc = read_line(s, "SYST:ERR?", e, sizeof e, err);
    if (rc != BG_OK)
        return rc;
    char *end;
    long code = strtol(e, &end, 10);
    if (end == e || (*end && *end != ','))
        return lost(s, err, "SYST:ERR? answered garbage after", cmd);
    if (code != 0) {
        char what[320];
        snprintf(what, sizeof what, "reported error %s after", e);
        return lost(s, err, what, cmd);
    }
    return BG_OK;
}

int bg_scpi_number(bg_scpi *s, const char *cmd, double *v, char *reply, size_t size,
                   bg_error *err)
{
    char buf[256];
    char *r = reply ? reply : buf;
    size_t sz = reply ? size : sizeof buf;
    int rc = bg_scpi_cmd(s, cmd, r, sz, err);
    if (rc != BG_OK)
        return rc;
    const char *p = r;
    size_t n = strlen(p);
    while (n && p[n - 1] == ' ')
        n--;
    while (n && *p == ' ')
        p++, n--;
    if (*p == '+')
        p++, n--;
    if (n == 0 || bgi_num_scan_finite(p, n, '.', v, NULL) != n || !isfinite(*v)) {
        char what[320];
        snprintf(what, sizeof what, "reply '%.200s' is not a number, to", r);
        return lost(s, err, what, cmd);
    }
    return BG_OK;
}
