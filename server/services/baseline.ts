import { Capture, Checkpoint } from '../models/index.js';
import { NotFoundError } from '../errors.js';
import type { CaptureBaseline } from '../../shared/protocol/accelerometer.js';

const ORIENTATION_WORDS: Record<string, string> = {
  flat: 'flat',
  'on-edge': 'on edge',
  inverted: 'inverted',
};

/** An orientation as a sentence reads it. */
export function orientationWord(o: string | null): string {
  return o === null ? 'not recorded' : (ORIENTATION_WORDS[o] ?? o);
}

/** Whether two captures of a quantity must share their orientation to be compared: acceleration reads gravity's component. */
export function needsSameOrientation(c: Pick<Capture, 'quantity'>): boolean {
  return c.quantity === 'acceleration';
}

/** The sentence of a capture with baseline captures of other orientations only. */
export function noBaselineOfOrientation(c: Pick<Capture, 'orientation'>): string {
  return `No baseline of this orientation (${orientationWord(c.orientation)}): the baseline has captures of other orientations only.`;
}

/**
 * The baseline capture a capture is compared with. Acceleration reads gravity's component along
 * the axis, so a flat capture is compared only with a flat one (a flat capture against an inverted
 * baseline differs by 2 g): when the cell's representative baseline has another orientation, the
 * newest valid baseline capture of this orientation is taken, and with none `problem` says so.
 * Other quantities take the representative as it is. `candidates` are the DUT's valid captures at
 * the baseline checkpoint.
 */
export function baselineOfOrientation(
  c: Capture,
  representative: Capture | undefined,
  candidates: readonly Capture[],
): { base: Capture | undefined; problem?: string } {
  if (!needsSameOrientation(c) || !representative) return { base: representative };
  const same = (x: Capture) => (x.orientation ?? null) === (c.orientation ?? null);
  if (same(representative)) return { base: representative };
  const time = (x: Capture) => (x.endedAt ? new Date(x.endedAt).getTime() : 0);
  const newest = candidates.filter(same).sort((a, b) => time(b) - time(a) || b.id - a.id)[0];
  return newest ? { base: newest } : { base: undefined, problem: noBaselineOfOrientation(c) };
}

/**
 * `GET /api/captures/:id/baseline`: the capture this one is compared with on its page — the
 * DUT's newest valid capture at the study's first checkpoint, of the same orientation for
 * acceleration — or the reason there is none.
 */
export async function captureBaseline(id: number): Promise<CaptureBaseline> {
  const c = await Capture.findByPk(id);
  if (!c) throw new NotFoundError('Capture');
  if (c.state !== 'finished')
    return {
      baseline: null,
      reason: 'not-finished',
      message: 'The before/after comparison is made when this capture is finished.',
    };
  const own = await Checkpoint.findByPk(c.checkpointId);
  const first = own
    ? await Checkpoint.findOne({
        where: { studyId: own.studyId, archivedAt: null },
        order: [
          ['position', 'ASC'],
          ['id', 'ASC'],
        ],
      })
    : null;
  if (!first)
    return {
      baseline: null,
      reason: 'no-baseline',
      message: 'The study has no baseline checkpoint.',
    };
  if (first.id === c.checkpointId) {
    return {
      baseline: null,
      reason: 'is-baseline',
      message:
        "This capture is at the study's first checkpoint: it is the baseline later captures are compared with.",
    };
  }
  const candidates = await Capture.findAll({
    where: { dutId: c.dutId, checkpointId: first.id, state: 'finished', excludedAt: null },
    order: [
      ['endedAt', 'DESC'],
      ['id', 'DESC'],
    ],
  });
  if (candidates.length === 0) {
    return {
      baseline: null,
      reason: 'no-baseline',
      message: `This DUT has no finished capture at “${first.name}” to compare with.`,
    };
  }
  const { base } = baselineOfOrientation(c, candidates[0], candidates);
  if (!base) {
    return {
      baseline: null,
      reason: 'no-baseline-orientation',
      message: `No baseline of this orientation (${orientationWord(c.orientation)}) at “${first.name}”: a ${c.quantity} capture is compared only with one of the same orientation.`,
    };
  }
  return {
    baseline: { id: base.id, checkpointId: first.id, checkpoint: first.name },
    reason: null,
    message: null,
  };
}
