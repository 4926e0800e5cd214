import { computed, ref, type ComputedRef, type Ref } from 'vue';
import type { FormInstance, FormItemRule, FormRules } from 'element-plus';
import type { z } from 'zod';
import { fieldErrors } from '../api/studyPlan';

/**
 * One adapter from a shared zod schema to Element Plus form rules, so a form checks exactly what
 * the API checks — limits included — and says it in the form's words.
 *
 * `body()` builds the request body from the form; `fields` maps each form item's `prop` to the
 * schema path whose issue it shows (`{ bathKHz: 'exposure.bathKHz' }`; a prop missing from the map
 * uses its own name; a list of paths shows the first that has an issue, e.g. a bound's own issue or
 * else the limit's). Every rule parses the whole body (cross-field rules such as "high above low"
 * land on their field), and `wording` replaces the generic message of a path — with a sentence, or
 * with a function of the schema's own message ("must be at least 12 characters" → "The password
 * must be at least 12 characters.").
 */
export function useZodForm<T>(options: {
  schema: z.ZodType<T> | (() => z.ZodType<T>);
  body: () => unknown;
  fields: readonly string[] | Record<string, string | readonly string[]>;
  wording?: Record<string, string | ((message: string) => string)>;
  /** When a field re-checks: on every change (default, with blur) or, for sign-in style forms, on blur. */
  trigger?: 'blur' | 'change' | ('blur' | 'change')[];
}): {
  formRef: Ref<FormInstance | undefined>;
  rules: ComputedRef<FormRules>;
  errorOf: (prop: string) => string;
  check: () => { data: T | null; errors: Record<string, string> };
  validate: () => Promise<boolean>;
  clear: () => void;
} {
  const formRef = ref<FormInstance>();
  const schema = (): z.ZodType<T> =>
    typeof options.schema === 'function' ? options.schema() : options.schema;
  const check = () => {
    const wording = options.wording ?? {};
    const fixed = Object.fromEntries(
      Object.entries(wording).filter((e): e is [string, string] => typeof e[1] === 'string'),
    );
    const result = fieldErrors(schema(), options.body(), fixed);
    for (const [path, message] of Object.entries(result.errors)) {
      const reword = wording[path];
      if (typeof reword === 'function') result.errors[path] = reword(message);
    }
    return result;
  };
  const paths = computed<Record<string, readonly string[]>>(() =>
    Array.isArray(options.fields)
      ? Object.fromEntries(options.fields.map((f) => [f, [f]]))
      : Object.fromEntries(
          Object.entries(options.fields as Record<string, string | readonly string[]>).map(
            ([prop, path]) => [prop, typeof path === 'string' ? [path] : path],
          ),
        ),
  );

  const rules = computed<FormRules>(() => {
    const out: FormRules = {};
    for (const [prop, list] of Object.entries(paths.value)) {
      const rule: FormItemRule = {
        trigger: options.trigger ?? ['blur', 'change'],
        validator: (_rule, _value, callback) => {
          const { errors } = check();
          const message = list.map((path) => errors[path]).find(Boolean);
          if (message) callback(new Error(message));
          else callback();
        },
      };
      out[prop] = [rule];
    }
    return out;
  });

  // A form may instead show each field's message through `:error="errorOf(prop)"`: nothing until
  // the first submit, then kept up to date as the fields change (no asynchronous validation).
  const tried = ref(false);
  function errorOf(prop: string): string {
    if (!tried.value) return '';
    const { errors } = check();
    const list = paths.value[prop] ?? [prop];
    return list.map((path) => errors[path]).find(Boolean) ?? '';
  }

  async function validate(): Promise<boolean> {
    tried.value = true;
    if (!formRef.value) return check().data !== null;
    const ok = await formRef.value.validate().catch(() => false);
    return ok !== false && check().data !== null;
  }

  function clear(): void {
    tried.value = false;
    formRef.value?.clearValidate();
  }

  return { formRef, rules, errorOf, check, validate, clear };
}

type Walkable = z.ZodType & {
  shape?: Record<string, z.ZodType>;
  unwrap?: () => z.ZodType;
  options?: z.ZodType[];
  minValue?: number | null;
  maxValue?: number | null;
  maxLength?: number | null;
  in?: z.ZodType;
  def?: { innerType?: z.ZodType };
};

/**
 * The numeric bounds a shared schema puts on one field (`['exposure', 'peakC']`), for hints and
 * placeholders; `variant` picks a discriminated union's member by its `kind`.
 */
export function boundsOf(
  schema: z.ZodType,
  path: readonly string[],
  variant?: string,
): { min: number | null; max: number | null } {
  const node = walk(schema, path, variant);
  return { min: node.minValue ?? null, max: node.maxValue ?? null };
}

/**
 * A numeric input's `min` and `max` from a shared schema's field (`v-bind="inputBounds(…)"` on an
 * `el-input-number`); a side the schema leaves open stays open.
 */
export function inputBounds(
  schema: z.ZodType,
  path: readonly string[],
  variant?: string,
): { min: number; max: number } {
  const { min, max } = boundsOf(schema, path, variant);
  return { min: min ?? -Infinity, max: max ?? Infinity };
}

/** The longest text a shared schema takes for one field (a textarea's `maxlength`), or undefined. */
export function maxLengthOf(
  schema: z.ZodType,
  path: readonly string[],
  variant?: string,
): number | undefined {
  return walk(schema, path, variant).maxLength ?? undefined;
}

/** The schema of one field, wrappers (optional, nullable, default, pipe) taken off. */
function walk(schema: z.ZodType, path: readonly string[], variant?: string): Walkable {
  let node = schema as Walkable;
  for (const key of path) {
    node = peel(node, variant);
    node = (node.shape?.[key] ?? node) as Walkable;
  }
  return peel(node, variant);
}

function peel(node: Walkable, variant?: string): Walkable {
  for (let i = 0; i < 8; i++) {
    if (node.options && variant) {
      const hit = node.options.find(
        (o) =>
          ((o as Walkable).shape?.kind as unknown as { value?: string } | undefined)?.value ===
          variant,
      );
      if (hit) {
        node = hit as Walkable;
        continue;
      }
    }
    if (typeof node.unwrap === 'function' && !node.shape) {
      node = node.unwrap() as Walkable;
      continue;
    }
    if (node.def?.innerType) {
      node = node.def.innerType as Walkable;
      continue;
    }
    // A pipe (a transform, or a check after trimming) keeps its limits on the input side.
    if (node.in && !node.shape) {
      node = node.in as Walkable;
      continue;
    }
    break;
  }
  return node;
}

/** "100 – 400" from a field's bounds (a hint beside its label), or '' when it has none. */
export function rangeHint(bounds: { min: number | null; max: number | null }, unit = ''): string {
  const f = (v: number) => (Math.abs(v) >= 1e5 ? v.toExponential(0) : String(v)).replace('-', '−');
  const u = unit ? ` ${unit}` : '';
  if (
    bounds.min !== null &&
    Number.isFinite(bounds.min) &&
    bounds.max !== null &&
    Number.isFinite(bounds.max)
  )
    return `${f(bounds.min)} – ${f(bounds.max)}${u}`;
  if (bounds.max !== null && Number.isFinite(bounds.max)) return `up to ${f(bounds.max)}${u}`;
  if (bounds.min !== null && Number.isFinite(bounds.min)) return `from ${f(bounds.min)}${u}`;
  return '';
}
