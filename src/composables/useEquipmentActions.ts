import { ref } from 'vue';
import { ElMessage, ElMessageBox } from 'element-plus';
import { ApiError } from '../api/http';

/**
 * The confirmations an instrument's or a reference's page asks before it changes the equipment's
 * standing: sending it for calibration, retiring it (with a reason) and returning it to service.
 * `calls` are the page's API functions; `done` reloads the page.
 */
export function useEquipmentActions(options: {
  what: () => string;
  calls: {
    away: () => Promise<unknown>;
    retire: (reason: string) => Promise<unknown>;
    reinstate: () => Promise<unknown>;
  };
  done: () => void | Promise<void>;
}) {
  const busy = ref(false);

  async function run(
    action: () => Promise<unknown>,
    success: string,
    failure: string,
  ): Promise<void> {
    busy.value = true;
    try {
      await action();
      ElMessage.success(success);
      await options.done();
    } catch (error) {
      ElMessage.error(error instanceof ApiError ? error.message : failure);
    } finally {
      busy.value = false;
    }
  }

  async function sendAway(): Promise<void> {
    const name = options.what();
    try {
      await ElMessageBox.confirm(
        `Mark “${name}” as away for calibration from today? It reads “Away for calibration” until its new calibration is recorded, and the bench warns anyone who picks it.`,
        'Send for calibration',
        { confirmButtonText: 'Mark as away', cancelButtonText: 'Cancel', type: 'warning' },
      );
    } catch {
      return;
    }
    await run(
      options.calls.away,
      `“${name}” is away for calibration`,
      'It could not be marked as away.',
    );
  }

  async function retire(): Promise<void> {
    const name = options.what();
    let reason: string;
    try {
      const answer = await ElMessageBox.prompt(
        `Retire “${name}”? It stays on record for the captures that name it, but the bench no longer offers it and the calibration reminders stop. Say why:`,
        'Retire',
        {
          confirmButtonText: 'Retire',
          cancelButtonText: 'Cancel',
          type: 'warning',
          inputPlaceholder: 'e.g. timebase failed; replaced by C-4',
          inputValidator: (v: string) =>
            v && v.trim().length > 0 ? true : 'Give the reason it leaves service',
          confirmButtonClass: 'el-button--danger',
        },
      );
      reason = answer.value.trim();
    } catch {
      return;
    }
    await run(() => options.calls.retire(reason), `“${name}” retired`, 'It could not be retired.');
  }

  async function reinstate(): Promise<void> {
    const name = options.what();
    try {
      await ElMessageBox.confirm(
        `Return “${name}” to service without recording a new calibration?`,
        'Return to service',
        {
          confirmButtonText: 'Return to service',
          cancelButtonText: 'Cancel',
        },
      );
    } catch {
      return;
    }
    await run(
      options.calls.reinstate,
      `“${name}” is back in service`,
      'It could not be returned to service.',
    );
  }

  return { busy, sendAway, retire, reinstate };
}
