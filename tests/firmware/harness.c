/*
 * Simulator harness for the decoder firmware: loads the real .elf into simavr (ATmega328P, 16 MHz),
 * drives the comparator pins at exact cycle times from a script, and writes every UART byte with the
 * cycle it left on. Used by tests/firmware (vitest) and bench/firmware.bench.ts.
 *
 *   harness FIRMWARE.elf SCRIPT CAPTURE [LIVE]
 *
 * LIVE, when given, is a file (a pseudo-terminal) that gets each UART byte as it is sent, line by
 * line: the simulated board's USB-serial bridge. The run is not paced to the wall clock; lines carry
 * decoder time, so the monitor reading them does not care how fast they come.
 *
 * SCRIPT, one command a line, times in CPU cycles, sorted by cycle ('#' starts a comment):
 *   until CYCLE               stop there
 *   flash ADDR BYTE...        write bytes into flash before the first instruction (the clock-start hook)
 *   avcc MV                   supply voltage at start, in millivolts (default 5000)
 *   pin CYCLE PORT BIT LEVEL  drive an input: PORT is B, C or D; LEVEL 0 or 1 (cycle 0 = before start)
 *   poke CYCLE ADDR VALUE     write one byte of RAM (data address) at that cycle (the hang hook)
 *   supply CYCLE MV           change the supply voltage at that cycle
 *
 * CAPTURE gets one record a line:
 *   reset CYCLE               the MCU (re)started: at 0, and after each watchdog reset
 *   timer CYCLE VALUE         TCCR1B written (the firmware's clock starts when its clock bits go non-zero)
 *   tx CYCLE BYTE             a byte written to the UART data register, in decimal
 *   pin CYCLE PORT BIT LEVEL  a scripted pin change, at the cycle it reached the MCU
 *   end CYCLE STATE           the run ended (STATE: done, or crashed)
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <fcntl.h>
#include <unistd.h>
#include <sim_avr.h>
#include <sim_elf.h>
#include <sim_io.h>
#include <sim_irq.h>
#include <sim_cycle_timers.h>
#include <avr_ioport.h>
#include <avr_uart.h>

typedef enum { EV_PIN, EV_POKE, EV_SUPPLY } event_kind_t;
typedef struct {
	avr_cycle_count_t cycle;
	event_kind_t kind;
	char port;
	int bit, value;
	unsigned addr;
} event_t;

static avr_t *avr;
static FILE *capture;
static event_t *events;
static size_t event_count, next_event;
static int levels[3][8]; /* current level of each scripted pin, for re-applying after a reset */
static int reset_seen;
static void (*core_reset)(struct avr_t *);
static int live_fd = -1;
static char live_line[256];
static size_t live_len;

static int port_index(char port) { return port == 'B' ? 0 : port == 'C' ? 1 : port == 'D' ? 2 : -1; }

static void drive(char port, int bit, int value)
{
	avr_raise_irq(avr_io_getirq(avr, AVR_IOCTL_IOPORT_GETIRQ(port), bit), value);
}

static avr_cycle_count_t on_event_due(struct avr_t *a, avr_cycle_count_t when, void *param)
{
	(void)param;
	(void)when;
	while (next_event < event_count && events[next_event].cycle <= a->cycle) {
		event_t *e = &events[next_event++];
		switch (e->kind) {
		case EV_PIN:
			levels[port_index(e->port)][e->bit] = e->value;
			drive(e->port, e->bit, e->value);
			fprintf(capture, "pin %llu %c %d %d\n", (unsigned long long)a->cycle, e->port, e->bit, e->value);
			break;
		case EV_POKE:
			a->data[e->addr] = (uint8_t)e->value;
			break;
		case EV_SUPPLY:
			a->vcc = a->avcc = (uint32_t)e->value;
			break;
		}
	}
	return next_event < event_count ? events[next_event].cycle : 0;
}

static void arm_events(void)
{
	avr_cycle_timer_cancel(avr, on_event_due, NULL);
	if (next_event < event_count) {
		avr_cycle_count_t due = events[next_event].cycle;
		avr_cycle_timer_register(avr, due > avr->cycle ? due - avr->cycle : 1, on_event_due, NULL);
	}
}

static void on_reset(struct avr_t *a)
{
	if (core_reset) core_reset(a);
	reset_seen = 1;
}

static void on_uart_byte(struct avr_irq_t *irq, uint32_t value, void *param)
{
	(void)irq;
	(void)param;
	fprintf(capture, "tx %llu %u\n", (unsigned long long)avr->cycle, value & 0xFF);
	if (live_fd < 0) return;
	live_line[live_len++] = (char)value;
	if ((value & 0xFF) == '\n' || live_len == sizeof live_line) {
		for (size_t done = 0; done < live_len;) {
			ssize_t n = write(live_fd, live_line + done, live_len - done);
			if (n <= 0) break;
			done += (size_t)n;
		}
		live_len = 0;
	}
}

static void on_tccr1b(struct avr_irq_t *irq, uint32_t value, void *param)
{
	(void)irq;
	(void)param;
	fprintf(capture, "timer %llu %u\n", (unsigned long long)avr->cycle, value & 0xFF);
}

/* The run never sleeps in real time: simavr's default sleep callback would usleep. */
static void no_sleep(avr_t *a, avr_cycle_count_t how_long)
{
	(void)a;
	(void)how_long;
}

static void fail(const char *what)
{
	fprintf(stderr, "harness: %s\n", what);
	exit(2);
}

int main(int argc, char **argv)
{
	if (argc != 4 && argc != 5) fail("usage: harness FIRMWARE.elf SCRIPT CAPTURE [LIVE]");
	if (argc == 5 && (live_fd = open(argv[4], O_WRONLY | O_NOCTTY)) < 0) fail("cannot open the live output");
	elf_firmware_t firmware;
	memset(&firmware, 0, sizeof firmware);
	if (elf_read_firmware(argv[1], &firmware) != 0) fail("cannot read the firmware .elf");
	strcpy(firmware.mmcu, "atmega328p");
	firmware.frequency = 16000000;

	FILE *script = fopen(argv[2], "r");
	if (!script) fail("cannot open the script");
	capture = fopen(argv[3], "w");
	if (!capture) fail("cannot open the capture file");

	avr_cycle_count_t until = 0;
	uint32_t start_mv = 5000;
	size_t capacity = 1024;
	events = malloc(capacity * sizeof *events);
	struct { unsigned addr; int value; } flash_pokes[64];
	size_t flash_count = 0;
	char line[4096];
	while (fgets(line, sizeof line, script)) {
		char *p = line;
		while (*p == ' ') p++;
		if (*p == '#' || *p == '\n' || *p == 0) continue;
		char word[16];
		int used = 0;
		if (sscanf(p, "%15s%n", word, &used) != 1) continue;
		p += used;
		if (event_count == capacity) events = realloc(events, (capacity *= 2) * sizeof *events);
		event_t *e = &events[event_count];
		unsigned long long cycle;
		if (!strcmp(word, "until")) {
			if (sscanf(p, "%llu", &cycle) != 1) fail("until needs a cycle");
			until = cycle;
		} else if (!strcmp(word, "avcc")) {
			if (sscanf(p, "%u", &start_mv) != 1) fail("avcc needs millivolts");
		} else if (!strcmp(word, "flash")) {
			unsigned addr;
			int n = 0, value;
			if (sscanf(p, "%x%n", &addr, &n) != 1) fail("flash needs an address");
			p += n;
			while (sscanf(p, "%x%n", &value, &n) == 1 && flash_count < 64) {
				flash_pokes[flash_count].addr = addr++;
				flash_pokes[flash_count++].value = value;
				p += n;
			}
		} else if (!strcmp(word, "pin")) {
			char port;
			if (sscanf(p, "%llu %c %d %d", &cycle, &port, &e->bit, &e->value) != 4 || port_index(port) < 0 || e->bit < 0 || e->bit > 7)
				fail("pin needs CYCLE PORT BIT LEVEL");
			e->cycle = cycle, e->kind = EV_PIN, e->port = port;
			if (cycle == 0) levels[port_index(port)][e->bit] = e->value;
			else event_count++;
		} else if (!strcmp(word, "poke")) {
			if (sscanf(p, "%llu %x %d", &cycle, &e->addr, &e->value) != 3) fail("poke needs CYCLE ADDR VALUE");
			e->cycle = cycle, e->kind = EV_POKE, event_count++;
		} else if (!strcmp(word, "supply")) {
			if (sscanf(p, "%llu %d", &cycle, &e->value) != 2) fail("supply needs CYCLE MV");
			e->cycle = cycle, e->kind = EV_SUPPLY, event_count++;
		} else {
			fprintf(stderr, "harness: unknown script command \"%s\"\n", word);
			exit(2);
		}
	}
	fclose(script);
	if (until == 0) fail("the script needs an until line");
	for (size_t i = 1; i < event_count; i++)
		if (events[i].cycle < events[i - 1].cycle) fail("script events must be in cycle order");

	avr = avr_make_mcu_by_name(firmware.mmcu);
	if (!avr) fail("simavr does not know the atmega328p");
	avr_init(avr);
	avr->log = 0;
	avr_load_firmware(avr, &firmware);
	for (size_t i = 0; i < flash_count; i++) avr->flash[flash_pokes[i].addr] = (uint8_t)flash_pokes[i].value;
	avr->vcc = avr->avcc = start_mv;
	avr->aref = start_mv;
	avr->sleep = no_sleep;
	core_reset = avr->reset;
	avr->reset = on_reset;

	uint32_t flags = 0;
	avr_ioctl(avr, AVR_IOCTL_UART_GET_FLAGS('0'), &flags);
	flags &= ~AVR_UART_FLAG_STDIO;
	avr_ioctl(avr, AVR_IOCTL_UART_SET_FLAGS('0'), &flags);
	avr_irq_register_notify(avr_io_getirq(avr, AVR_IOCTL_UART_GETIRQ('0'), UART_IRQ_OUTPUT), on_uart_byte, NULL);
	avr_irq_register_notify(avr_iomem_getirq(avr, 0x81 /* TCCR1B */, NULL, AVR_IOMEM_IRQ_ALL), on_tccr1b, NULL);

	const char ports[3] = {'B', 'C', 'D'};
	for (int i = 0; i < 3; i++)
		for (int bit = 0; bit < 8; bit++) drive(ports[i], bit, levels[i][bit]);
	fprintf(capture, "reset 0\n");
	arm_events();

	int state = cpu_Running;
	while (avr->cycle < until) {
		state = avr_run(avr);
		if (state == cpu_Done || state == cpu_Crashed) break;
		if (reset_seen) {
			/* A reset clears RAM, I/O registers and cycle timers: the outside world is still there. */
			reset_seen = 0;
			fprintf(capture, "reset %llu\n", (unsigned long long)avr->cycle);
			for (int i = 0; i < 3; i++)
				for (int bit = 0; bit < 8; bit++) drive(ports[i], bit, levels[i][bit]);
			arm_events();
		}
	}
	fprintf(capture, "end %llu %s\n", (unsigned long long)avr->cycle, state == cpu_Crashed ? "crashed" : "done");
	fclose(capture);
	return state == cpu_Crashed ? 1 : 0;
}
