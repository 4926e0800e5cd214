import { nextTick, ref, watch, type WatchSource } from 'vue';

/**
 * A scrolling log that keeps its newest line in view: it follows while the reader is at the
 * bottom, and stops following once they scroll up to read something older. Bind `box` as the
 * scrolling element's template ref and `onScroll` to its scroll event.
 */
export function useFollowScroll(source: WatchSource<unknown>) {
  const box = ref<HTMLElement>();
  const follow = ref(true);

  function onScroll(): void {
    const el = box.value;
    if (el) follow.value = el.scrollHeight - el.scrollTop - el.clientHeight < 24;
  }

  watch(source, async () => {
    if (!follow.value) return;
    await nextTick();
    if (box.value) box.value.scrollTop = box.value.scrollHeight;
  });

  return { box, onScroll };
}
