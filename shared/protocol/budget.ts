/**
 * An uncertainty budget as the API carries it (JCGM 100's table: one line per input, then u_c, k
 * and U): a capture's, a comparison's and a tilt check's budgets all have this shape.
 */
import { z } from 'zod';

export const BudgetLine = z.object({
  name: z.string(),
  symbol: z.string().optional(),
  value: z.number(),
  unit: z.string(),
  distribution: z.string(),
  sensitivity: z.number(),
  contribution: z.number(),
  /** Infinity (type B without a stated ν) serialises as null. */
  dof: z.number().nullable(),
  type: z.enum(['A', 'B']),
  note: z.string().optional(),
  source: z.string().optional(),
  key: z.string().optional(),
});
export type BudgetLine = z.infer<typeof BudgetLine>;

export const BudgetWire = z.object({
  mean: z.number(),
  components: z.array(BudgetLine),
  combined: z.number(),
  effectiveDof: z.number().nullable(),
  k: z.number(),
  /** "k = 2.31 from ν_eff = 8, about 95 % coverage" (absent in summaries stored before issue 8). */
  coverage: z.string().optional(),
  expanded: z.number(),
  relativeExpanded: z.number().nullable(),
  notes: z.array(z.string()),
});
export type BudgetWire = z.infer<typeof BudgetWire>;
