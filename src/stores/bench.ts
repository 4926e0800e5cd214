import { computed, ref, watch } from 'vue';
import { defineStore } from 'pinia';
import { G_N, wgs84Gravity } from '../../shared/analysis/gravity';
import type { StaticOrientation } from '../../shared/analysis/tiltCheck';
import { AXES, type Axis } from '../../shared/protocol/accelerometer';

export const BENCH_KEY = 'driftbench.bench';

export type BenchLinkKind = 'simulator' | 'serial';
export type BenchMode = 'talk' | 'query';
export type BenchTarget = 'duration' | 'count' | 'none';

/** What the bench's setup form holds; remembered between visits. */
export interface BenchChoices {
  studyId: number | null;
  checkpointId: number | null;
  dutId: number | null;
  instrumentId: number | null;
  referenceId: number | null;
  /** 'instrument' (the instrument's own profile) or a LINK_PRESETS id. */
  profileSource: string;
  linkKind: BenchLinkKind;
  /** Simulator time factor (1 = real time). */
  acceleration: number;
  gateTime: number;
  mode: BenchMode;
  ambientC: number | null;
  orientation: StaticOrientation | null;
  notes: string;
  target: BenchTarget;
  /** Seconds of capture time. */
  targetSeconds: number;
  targetCount: number;
}

/** Where the lab is, for local gravity (WGS84 normal gravity). */
export interface LabSite {
  latitudeDeg: number;
  heightM: number;
}

export const DEFAULT_CHOICES: BenchChoices = {
  studyId: null,
  checkpointId: null,
  dutId: null,
  instrumentId: null,
  referenceId: null,
  profileSource: 'talk-counter',
  linkKind: 'simulator',
  acceleration: 10,
  gateTime: 1,
  mode: 'talk',
  ambientC: 23,
  orientation: null,
  notes: '',
  target: 'duration',
  targetSeconds: 600,
  targetCount: 1000,
};

/** Latitude 47.0°, 300 m: a plausible default site; every lab should set its own. */
export const DEFAULT_SITE: LabSite = { latitudeDeg: 47.0, heightM: 300 };

interface Stored {
  choices?: Partial<BenchChoices>;
  site?: Partial<LabSite>;
  accelSamples?: number;
  tiltAxis?: Axis;
}

function readStored(): Stored {
  try {
    const raw = localStorage.getItem(BENCH_KEY);
    return raw ? (JSON.parse(raw) as Stored) : {};
  } catch {
    return {};
  }
}

/** The bench's remembered choices and lab site (localStorage), so a technician's next capture starts where the last one left off. */
export const useBenchStore = defineStore('bench', () => {
  const stored = readStored();
  const choices = ref<BenchChoices>({ ...DEFAULT_CHOICES, ...(stored.choices ?? {}) });
  const site = ref<LabSite>({ ...DEFAULT_SITE, ...(stored.site ?? {}) });
  const accelSamples = ref<number>(stored.accelSamples ?? 100);
  /** The axis the guided tilt check reads (Z unless the operator chose another). */
  const tiltAxis = ref<Axis>(
    AXES.includes(stored.tiltAxis as Axis) ? (stored.tiltAxis as Axis) : 'z',
  );

  /** Local gravity at the lab, m/s² (WGS84 normal gravity; g_n when the site is invalid). */
  const localGravity = computed(() => {
    try {
      return wgs84Gravity(site.value.latitudeDeg, site.value.heightM);
    } catch {
      return G_N;
    }
  });

  function persist() {
    try {
      localStorage.setItem(
        BENCH_KEY,
        JSON.stringify({
          choices: choices.value,
          site: site.value,
          accelSamples: accelSamples.value,
          tiltAxis: tiltAxis.value,
        } satisfies Stored),
      );
    } catch {
      // private mode or full storage: choices last for this tab
    }
  }

  /** Remember a set of choices (the form calls this when a capture starts). */
  function remember(next: Partial<BenchChoices>): void {
    choices.value = { ...choices.value, ...next };
  }

  function setSite(next: Partial<LabSite>): void {
    site.value = { ...site.value, ...next };
  }

  function reset(): void {
    choices.value = { ...DEFAULT_CHOICES };
    site.value = { ...DEFAULT_SITE };
    accelSamples.value = 100;
    tiltAxis.value = 'z';
  }

  watch([choices, site, accelSamples, tiltAxis], persist, { deep: true, flush: 'sync' });

  return { choices, site, accelSamples, tiltAxis, localGravity, remember, setSite, reset };
});
