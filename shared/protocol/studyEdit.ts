import { z } from 'zod';
import { Text } from './text.js';
import { Exposure } from './process.js';

/**
 * Editing a study's plan after it was made (issue 13): studies, checkpoints and DUTs are edited,
 * reordered, archived or deleted; a lead excludes a capture from the evidence or chooses which
 * capture represents a matrix cell. Every change is audited and refused on a locked study.
 */

const Id = z.number().int().positive().max(2_147_483_647);
const nonEmpty = <T extends object>(v: T) => Object.keys(v).length > 0;

/** PATCH /api/studies/:id: title, process, description; `archived` hides it from the plan lists. */
export const StudyPatch = z
  .strictObject({
    title: Text({ min: 1, max: 200 }).optional(),
    process: Text({ max: 200 }).nullable().optional(),
    description: Text({ max: 5000, trim: false }).nullable().optional(),
    archived: z.boolean().optional(),
  })
  .refine(nonEmpty, { message: 'nothing to change' });
export type StudyPatch = z.infer<typeof StudyPatch>;

/** PATCH /api/checkpoints/:id: name, exposure (null: parts as received), archived. */
export const CheckpointPatch = z
  .strictObject({
    name: Text({ min: 1, max: 200 }).optional(),
    exposure: Exposure.nullable().optional(),
    archived: z.boolean().optional(),
  })
  .refine(nonEmpty, { message: 'nothing to change' });
export type CheckpointPatch = z.infer<typeof CheckpointPatch>;

/** POST /api/studies/:id/checkpoints/order: every checkpoint of the study, once, in the new order. */
export const CheckpointOrder = z.strictObject({
  ids: z
    .array(Id)
    .min(1, 'list every checkpoint of the study')
    .max(1000)
    .refine((ids) => new Set(ids).size === ids.length, {
      message: 'must not name a checkpoint twice',
    }),
});
export type CheckpointOrder = z.infer<typeof CheckpointOrder>;

/** POST /api/captures/:id/exclude: why the capture is left out of the evidence. */
export const CaptureExclude = z.strictObject({
  reason: Text({ min: 3, max: 1000 }),
});
export type CaptureExclude = z.infer<typeof CaptureExclude>;

/** PUT /api/studies/:id/cells: the capture that represents one DUT × checkpoint (null: the default). */
export const CellChoice = z.strictObject({
  dutId: Id,
  checkpointId: Id,
  captureId: Id.nullable(),
});
export type CellChoice = z.infer<typeof CellChoice>;

/** A capture's exclusion as the API shows it (null while it counts as evidence). */
export const CaptureExclusion = z.object({
  at: z.string(),
  by: z.number().int().nullable(),
  reason: z.string(),
});
export type CaptureExclusion = z.infer<typeof CaptureExclusion>;

/** What `PUT /api/studies/:id/cells` answers: the cell's choice after the change. */
export const CellChoiceResult = z.object({
  dutId: z.number().int(),
  checkpointId: z.number().int(),
  /** The chosen capture, or null when the cell uses its default (the latest valid capture). */
  captureId: z.number().int().nullable(),
});
export type CellChoiceResult = z.infer<typeof CellChoiceResult>;

/** One capture of a matrix cell, for choosing the representative or excluding one. */
export const CellCandidate = z.object({
  id: z.number().int(),
  state: z.string(),
  startedAt: z.string(),
  endedAt: z.string().nullable(),
  readingCount: z.number().int(),
  orientation: z.string().nullable(),
  simulated: z.boolean(),
  excluded: CaptureExclusion.nullable(),
  /** This capture represents the cell (chosen, or the default). */
  represents: z.boolean(),
  /** A lead chose it (rather than the default rule). */
  chosen: z.boolean(),
});
export type CellCandidate = z.infer<typeof CellCandidate>;

/** GET /api/studies/:id/cells?dutId=&checkpointId=: every capture of one cell, newest first. */
export const CellCaptures = z.object({
  dutId: z.number().int(),
  checkpointId: z.number().int(),
  captures: z.array(CellCandidate),
});
export type CellCaptures = z.infer<typeof CellCaptures>;

export const CellQuery = z.object({
  dutId: z.coerce.number().int().positive().max(2_147_483_647),
  checkpointId: z.coerce.number().int().positive().max(2_147_483_647),
});

/** What `PATCH /api/studies/:id` answers: the study's editable fields after the change. */
export const StudyEditResult = z.object({
  id: z.number().int(),
  title: z.string(),
  process: z.string().nullable(),
  description: z.string().nullable(),
  status: z.string(),
  archived: z.boolean(),
});
export type StudyEditResult = z.infer<typeof StudyEditResult>;

/** What exclude and include answer: the capture and its exclusion (null once included). */
export const CaptureExclusionResult = z.object({
  id: z.number().int(),
  excluded: CaptureExclusion.nullable(),
});
export type CaptureExclusionResult = z.infer<typeof CaptureExclusionResult>;
