/* Sent in HELLO: 1-24 characters of A-Z a-z 0-9 . _ - (protocol v1). */
#ifndef VERSION_H
#define VERSION_H
#define FIRMWARE_NAME "pairwatch-avr-1.0.0"
#endif
