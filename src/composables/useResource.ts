import { onMounted, ref, shallowRef, type Ref, type ShallowRef } from 'vue';

export interface Resource<T> {
  data: ShallowRef<T | null>;
  loading: Ref<boolean>;
  error: ShallowRef<unknown>;
  reload: () => Promise<void>;
}

/** Load something once on mount, with loading and error state and a reload for "Try again". */
export function useResource<T>(load: () => Promise<T>, { immediate = true } = {}): Resource<T> {
  const data = shallowRef<T | null>(null);
  const loading = ref(false);
  const error = shallowRef<unknown>(null);
  let generation = 0;

  async function reload(): Promise<void> {
    const mine = ++generation;
    loading.value = true;
    error.value = null;
    try {
      const value = await load();
      if (mine === generation) data.value = value;
    } catch (cause) {
      if (mine === generation) error.value = cause;
    } finally {
      if (mine === generation) loading.value = false;
    }
  }

  if (immediate) onMounted(reload);
  return { data, loading, error, reload };
}
