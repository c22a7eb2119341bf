/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The ATmega328P side of the firmware check (tests/firmware/run.sh), run under simavr: calls
** the emitted LOOKUP for every ADC code 0 .. NCODES-1 and writes, one line per code, the
** value's 32 bits and the cycles the call took (Timer1 at the CPU clock, prescaler 1), as
** hex, through simavr's console register (GPIOR0; simavr prints each line after "O:").
** The first line is "timer D0 D1000": the cycles read with nothing between the two reads,
** and with __builtin_avr_delay_cycles(1000) between them, so that the harness can check
** the timer counts exactly 1000 more.
** Build: -DLOOKUP=sym_lookup [-DVALUE_FLOAT] -DNCODES=4096UL. */
#include <avr/interrupt.h>
#include <avr/io.h>
#include <avr/sleep.h>
#include <stdint.h>
#include <string.h>

/* simavr reads this section to learn its console register: tag 11 is the console in
** simavr's avr_mcu_section.h; linked at 0x910000, outside the flash, with
** -Wl,--section-start=.mmcu=0x910000 */
struct mmcu_addr {
    uint8_t tag, len;
    void *what;
} __attribute__((packed));
const struct mmcu_addr console_tag __attribute__((section(".mmcu"), used)) = {
    11, sizeof(void *), (void *)&GPIOR0
};

#ifdef VALUE_FLOAT
typedef float value_t;
#else
typedef int32_t value_t;
#endif
value_t LOOKUP(uint32_t code);

static void put(char c)
{
    GPIOR0 = (uint8_t)c;
}

static void hex(uint32_t v, int digits)
{
    for (int i = (digits - 1) * 4; i >= 0; i -= 4) {
        uint8_t n = (uint8_t)((v >> i) & 15u);
        put((char)(n < 10 ? '0' + n : 'a' + n - 10));
    }
}

int main(void)
{
    uint16_t t0, t1, d0;
    TCCR1A = 0;
    TCCR1B = _BV(CS10); /* Timer1 counts CPU cycles */
    t0 = TCNT1;
    t1 = TCNT1;
    d0 = (uint16_t)(t1 - t0);
    t0 = TCNT1;
    __builtin_avr_delay_cycles(1000);
    t1 = TCNT1;
    put('t'), put(' '), hex(d0, 4), put(' '), hex((uint16_t)(t1 - t0), 4), put('\r');
    for (uint32_t code = 0; code < NCODES; code++) {
        value_t v;
        uint32_t bits;
        t0 = TCNT1;
        v = LOOKUP(code);
        t1 = TCNT1;
        memcpy(&bits, &v, sizeof bits);
        hex(bits, 8), put(' '), hex((uint16_t)(t1 - t0 - d0), 4), put('\r');
    }
    put('e'), put('n'), put('d'), put('\r');
    cli();
    sleep_cpu(); /* sleeping with interrupts off: simavr stops */
    for (;;)
        ;
}
