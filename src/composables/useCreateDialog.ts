import { ref } from 'vue';
import { ElMessage } from 'element-plus';
import { ApiError } from '../api/http';

/**
 * The machinery a "create" dialog shares: field errors shown only after the first submit (`tried`, `err`),
 * `saving` and `failure` state, a `submit` that checks the form, saves it, says so, and hands over to `onSaved`,
 * an `onEnter` that submits from plain inputs (not textareas, not selects), and a `reset` for `@closed`.
 *
 * `check` gives the request body (or `data: null`) with field errors, e.g. from `fieldErrors`; a dialog that
 * validates with Element Plus form rules passes `validate` instead, which runs first. An `ApiError` becomes
 * `failure` with the server's message; anything else shows the dialog's own `failure` sentence.
 */
export function useCreateDialog<D, R = unknown>(options: {
  check: () => { data: D | null; errors?: Record<string, string> };
  validate?: () => Promise<boolean | undefined> | undefined;
  save: (data: D) => Promise<R>;
  success: (data: D) => string;
  failure: string;
  onSaved: (result: R) => void;
  clear: () => void;
}) {
  const tried = ref(false);
  const saving = ref(false);
  const failure = ref<string | null>(null);

  const err = (key: string): string => (tried.value ? (options.check().errors?.[key] ?? '') : '');

  async function submit(): Promise<void> {
    tried.value = true;
    if (options.validate && !(await options.validate())) return;
    const data = options.check().data;
    if (!data || saving.value) return;
    saving.value = true;
    failure.value = null;
    try {
      const result = await options.save(data);
      ElMessage.success(options.success(data));
      options.onSaved(result);
    } catch (error) {
      failure.value = error instanceof ApiError ? error.message : options.failure;
    } finally {
      saving.value = false;
    }
  }

  function onEnter(event: KeyboardEvent): void {
    const target = event.target as HTMLElement | null;
    // Enter in a select opens or picks an option, in a date field takes the typed date, and in a
    // textarea starts a new line; only plain inputs submit.
    if (!target || target.tagName !== 'INPUT' || target.closest('.el-select, .el-date-editor'))
      return;
    event.preventDefault();
    void submit();
  }

  function reset(): void {
    options.clear();
    tried.value = false;
    failure.value = null;
  }

  return { tried, saving, failure, err, submit, onEnter, reset };
}
