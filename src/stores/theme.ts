import { ref, watch } from 'vue';
import { defineStore } from 'pinia';

export type ThemeMode = 'light' | 'dark';

export const THEME_KEY = 'driftbench.theme';

function initialMode(): ThemeMode {
  try {
    const saved = localStorage.getItem(THEME_KEY);
    if (saved === 'light' || saved === 'dark') return saved;
    return window.matchMedia?.('(prefers-color-scheme: dark)').matches ? 'dark' : 'light';
  } catch {
    return 'light';
  }
}

/** Light or dark theme; Element Plus follows the `dark` class on <html>. */
export const useThemeStore = defineStore('theme', () => {
  const mode = ref<ThemeMode>(initialMode());

  watch(mode, (value) => document.documentElement.classList.toggle('dark', value === 'dark'), {
    immediate: true,
  });

  /** Switch theme and remember the choice (until then the system preference decides). */
  function toggle(): void {
    mode.value = mode.value === 'dark' ? 'light' : 'dark';
    try {
      localStorage.setItem(THEME_KEY, mode.value);
    } catch {
      // Not persisted; the choice holds for this tab.
    }
  }

  return { mode, toggle };
});
