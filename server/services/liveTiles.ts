import { TILE_BASE } from './readings.js';

/** Highest tile level (level L covers runs of 64·2^L seqs), as buildTiles and migration 0110. */
export const TILE_TOP_LEVEL = 20;

/** A batch's min/max tiles at every level, column by column, ready for unnest. */
export interface BatchTiles {
  level: number[];
  bucket: number[];
  minSeq: number[];
  minT: number[];
  minValue: number[];
  maxSeq: number[];
  maxT: number[];
  maxValue: number[];
}

/** A tile set holding no tile: where every set built here starts. */
export function emptyTiles(): BatchTiles {
  return {
    level: [],
    bucket: [],
    minSeq: [],
    minT: [],
    minValue: [],
    maxSeq: [],
    maxT: [],
    maxValue: [],
  };
}

/**
 * The min/max tiles of one batch of readings in strictly increasing seq order, at levels 0…20:
 * per bucket the lowest reading and the highest reading, ties going to the smallest seq — the
 * rule of buildTiles (server/services/readings.ts) at finish and of the tile trigger
 * (migration 20261202-0110). Level 0 is formed from the readings, each higher level from the
 * level below (a bucket of level L+1 is buckets 2b and 2b+1 of level L), so a batch of n readings
 * costs n + about 2·n/64 + 21 steps. Merged into stored tiles with the same min/max rule, the result is
 * what buildTiles makes from all the capture's readings.
 */
export function tilesOfBatch(
  seq: ArrayLike<number>,
  t: ArrayLike<number>,
  value: ArrayLike<number>,
): BatchTiles {
  const out = emptyTiles();
  const n = seq.length;
  if (n === 0) return out;
  // Level 0, from the readings (seq order: a strict comparison keeps the smallest seq on ties).
  // One level's buckets, lowest first (`level` stays empty: they all share the level).
  let cur = emptyTiles();
  let last = -1;
  for (let i = 0; i < n; i++) {
    const b = Math.floor(seq[i] / TILE_BASE);
    const v = value[i];
    if (b !== last) {
      cur.bucket.push(b);
      cur.minSeq.push(seq[i]);
      cur.minT.push(t[i]);
      cur.minValue.push(v);
      cur.maxSeq.push(seq[i]);
      cur.maxT.push(t[i]);
      cur.maxValue.push(v);
      last = b;
      continue;
    }
    const k = cur.bucket.length - 1;
    if (v < cur.minValue[k]) {
      cur.minSeq[k] = seq[i];
      cur.minT[k] = t[i];
      cur.minValue[k] = v;
    }
    if (v > cur.maxValue[k]) {
      cur.maxSeq[k] = seq[i];
      cur.maxT[k] = t[i];
      cur.maxValue[k] = v;
    }
  }
  for (let level = 0; ; level++) {
    for (let k = 0; k < cur.bucket.length; k++) {
      out.level.push(level);
      out.bucket.push(cur.bucket[k]);
      out.minSeq.push(cur.minSeq[k]);
      out.minT.push(cur.minT[k]);
      out.minValue.push(cur.minValue[k]);
      out.maxSeq.push(cur.maxSeq[k]);
      out.maxT.push(cur.maxT[k]);
      out.maxValue.push(cur.maxValue[k]);
    }
    if (level === TILE_TOP_LEVEL) return out;
    // The next level up: buckets in increasing order, so the earlier tile holds the smaller seqs
    // and a strict comparison again keeps the smallest seq on ties.
    const up = emptyTiles();
    for (let k = 0; k < cur.bucket.length; k++) {
      const b = Math.floor(cur.bucket[k] / 2);
      const j = up.bucket.length - 1;
      if (j < 0 || up.bucket[j] !== b) {
        up.bucket.push(b);
        up.minSeq.push(cur.minSeq[k]);
        up.minT.push(cur.minT[k]);
        up.minValue.push(cur.minValue[k]);
        up.maxSeq.push(cur.maxSeq[k]);
        up.maxT.push(cur.maxT[k]);
        up.maxValue.push(cur.maxValue[k]);
        continue;
      }
      if (cur.minValue[k] < up.minValue[j]) {
        up.minSeq[j] = cur.minSeq[k];
        up.minT[j] = cur.minT[k];
        up.minValue[j] = cur.minValue[k];
      }
      if (cur.maxValue[k] > up.maxValue[j]) {
        up.maxSeq[j] = cur.maxSeq[k];
        up.maxT[j] = cur.maxT[k];
        up.maxValue[j] = cur.maxValue[k];
      }
    }
    cur = up;
  }
}

/**
 * The tiles of several batches taken together, from the tiles of each (as {@link tilesOfBatch}
 * made them). `parts` must be in seq order, every seq of a part above every seq of the parts
 * before it: then at each level a part's buckets start at or after the previous part's last one,
 * and only that one bucket can be shared. A shared bucket keeps the lower minimum and the higher
 * maximum, ties going to the smaller seq (the rule of buildTiles and of the trigger), so the result
 * equals tilesOfBatch of the batches joined — with each bucket once, as one INSERT … ON CONFLICT
 * DO UPDATE requires.
 */
export function mergeBatchTiles(parts: readonly BatchTiles[]): BatchTiles {
  if (parts.length === 1) return parts[0];
  const out = emptyTiles();
  const at = parts.map(() => 0);
  for (let level = 0; level <= TILE_TOP_LEVEL; level++) {
    for (let p = 0; p < parts.length; p++) {
      const t = parts[p];
      let i = at[p];
      for (; i < t.level.length && t.level[i] === level; i++) {
        const k = out.level.length - 1;
        if (k >= 0 && out.level[k] === level && out.bucket[k] === t.bucket[i]) {
          if (
            t.minValue[i] < out.minValue[k] ||
            (t.minValue[i] === out.minValue[k] && t.minSeq[i] < out.minSeq[k])
          ) {
            out.minSeq[k] = t.minSeq[i];
            out.minT[k] = t.minT[i];
            out.minValue[k] = t.minValue[i];
          }
          if (
            t.maxValue[i] > out.maxValue[k] ||
            (t.maxValue[i] === out.maxValue[k] && t.maxSeq[i] < out.maxSeq[k])
          ) {
            out.maxSeq[k] = t.maxSeq[i];
            out.maxT[k] = t.maxT[i];
            out.maxValue[k] = t.maxValue[i];
          }
          continue;
        }
        out.level.push(level);
        out.bucket.push(t.bucket[i]);
        out.minSeq.push(t.minSeq[i]);
        out.minT.push(t.minT[i]);
        out.minValue.push(t.minValue[i]);
        out.maxSeq.push(t.maxSeq[i]);
        out.maxT.push(t.maxT[i]);
        out.maxValue.push(t.maxValue[i]);
      }
      at[p] = i;
    }
  }
  return out;
}
