// The limits every reader, loader and host applies to untrusted input, in one place: anything beyond them is a
// corrupt or hostile file, refused with a typed error instead of hanging, exhausting memory or giving a number.
// Values are judgement calls sized well beyond real structures and trajectories ("common practice, no source"
// unless a source is named); tests import them from here instead of repeating the numbers.

/** Cell volume range believed for a structure (Å³). Below: no atom fits (one water molecule takes ~30 Å³). */
export const MIN_CELL_VOLUME_A3 = 1;
/** Above: a box 1 µm on a side — no atomistic cell is that large (units wrong, or an overflowing number). */
export const MAX_CELL_VOLUME_A3 = 1e9;
/** Largest coordinate magnitude believed (Å); 10⁵ Å = 10 µm, far beyond any simulated or crystal structure. */
export const MAX_COORDINATE_A = 1e5;
/**
 * Two atoms closer than this (Å) are an error in the structure, not chemistry: the shortest bond (H₂) is 0.741 Å
 * (CRC Handbook of Chemistry and Physics, bond lengths of diatomic molecules).
 */
export const MIN_ATOM_DISTANCE_A = 0.5;

/** Largest atom count of one frame believed (a count line beyond this is a corrupt file). */
export const MAX_ATOMS_PER_FRAME = 100_000_000;
/** Most values on one atom line of extended XYZ (all Properties columns together). */
export const MAX_FIELDS_PER_ATOM = 4096;
/** Longest line of an extended XYZ file (bytes): binary data or a broken file beyond it. */
export const MAX_LINE_BYTES = 64 << 20;
/**
 * Most bytes a file read whole into memory (CIF, uploads, model files, decompressed gzip of those) may have:
 * real CIFs are kilobytes, uploaded trajectories tens of MiB; a gzip "bomb" stops here instead of filling memory.
 */
export const MAX_WHOLE_FILE_BYTES = 256 << 20;
/**
 * Largest request body the browser host reads (bytes): an upload of MAX_WHOLE_FILE_BYTES as base64 (4/3 of its
 * size) with room for the JSON around it. Refused from its Content-Length header, before reading.
 */
export const MAX_REQUEST_BYTES = Math.ceil((MAX_WHOLE_FILE_BYTES * 4) / 3) + (1 << 20);
/** Deepest nesting of arrays and objects accepted in JSON from files (frame properties, models, projects). */
export const MAX_JSON_DEPTH = 64;
