import { ref } from 'vue';
import { defineStore } from 'pinia';

/** Where the capture being recorded is remembered, so a reload can resume it (src/stores/benchCapture.ts). */
export const ACTIVE_CAPTURE_KEY = 'driftbench.bench.active';

function rememberedId(): number | null {
  try {
    const raw = localStorage.getItem(ACTIVE_CAPTURE_KEY);
    const id = raw ? (JSON.parse(raw) as { captureId?: unknown }).captureId : null;
    return Number.isInteger(id) ? (id as number) : null;
  } catch {
    return null;
  }
}

/**
 * What the rail shows about the bench: a capture recording in the background, or one a reload
 * interrupted. Kept apart from the bench's capture store so the shell never loads the capture
 * engine, the links and the uploader (they come with the bench page).
 */
export const useBenchStatusStore = defineStore('benchStatus', () => {
  const recording = ref(false);
  const captureId = ref<number | null>(null);
  const resumableId = ref<number | null>(rememberedId());
  return { recording, captureId, resumableId };
});
