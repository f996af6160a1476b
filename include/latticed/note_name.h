/*
 * note_name: the 12-TET name of a MIDI key, as players read it.
 *
 * Model: key 60 is C4 and key 69 is A4 (440 Hz), the usual MIDI note-number
 * naming; octave numbers change between B and C, so key 0 is C-1 and key
 * 127 is G9.  Names are written with sharps only ("C#4"), in ASCII, the
 * same spelling `latticed table` prints.
 */
#ifndef LATTICED_NOTE_NAME_H
#define LATTICED_NOTE_NAME_H

#include <stdbool.h>
#include <stddef.h>

/* Longest name: "C#-1" and its terminator. */
#define NOTE_NAME_MAX 8

/* Writes the name of key (0..127) into buf and returns buf; "?" outside. */
char *note_name(int key, char *buf, size_t size);

/* True for the five keys of each octave that are black on a piano (C#, D#,
 * F#, G#, A#). */
bool note_is_black(int key);

#endif
