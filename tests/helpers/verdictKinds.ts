import { apiAs } from './browser.js';
import { gaussian } from './random.js';
import { linkPreset } from '../../shared/protocol/linkProfile.js';
import { SPI_AXIS_QUERY } from '../../shared/protocol/accelerometer.js';

// Study 1 of the demo lab with a verdict of every kind beside the changes from the baseline: the
// crystal's stability limit and the accelerometer's tilt checks. The matrix tally test and the
// printed report's layout test both start from it.

type Api = Awaited<ReturnType<typeof apiAs>>;

/** One finished capture of `values` at 1 s (frequency) or 0.1 s (acceleration) apart. */
async function finished(api: Api, body: Record<string, unknown>, values: number[]) {
  const c = await api.call<{ id: number }>('POST', '/api/captures', { ambientC: 23, ...body });
  const step = body.quantity === 'frequency' ? 1 : 0.1;
  const readings = values.map((value, seq) => ({ seq, t: seq * step, value }));
  await api.call('POST', `/api/captures/${c.id}/readings`, { readings });
  await api.call('POST', `/api/captures/${c.id}/finish`);
  return c.id;
}

/**
 * Gives the crystal Y1 a stability limit its new 600-reading baseline capture exceeds, and the
 * accelerometer U5 an X-axis tilt check at the first two checkpoints whose offset moves past its
 * limit. Returns the checkpoint ids in order, the crystal's id and that capture's id.
 */
export async function addStabilityAndTiltVerdicts(baseUrl: string) {
  const technician = await apiAs(baseUrl, 'technician');
  const engineer = await apiAs(baseUrl, 'engineer');
  const study = await technician.call<{
    checkpoints: Array<{ id: number; order: number }>;
    duts: Array<{ id: number; label: string; nominal: number }>;
  }>('GET', '/api/studies/1');
  const checkpoints = [...study.checkpoints].sort((a, b) => a.order - b.order).map((c) => c.id);
  const crystal = study.duts.find((d) => d.label.startsWith('Y1'))!;
  const accel = study.duts.find((d) => d.label.startsWith('U5'))!;

  // White FM of 1 ppb at 1 s: σy(10 s) ≈ 0.32 ppb (NIST SP 1065 Table 3: σy(τ) = σ/√τ), whose
  // 95 % interval lies wholly above a 0.1 ppb limit: exceeds. Its budget's repeatability line is a
  // Student-t one with a long note and a ν_i of about 600, the widest budget of the report.
  await engineer.call('PATCH', `/api/duts/${crystal.id}`, {
    limits: { stability: { limit: 0.1, tauS: 10 } },
  });
  const g = gaussian(11);
  const crystalCaptureId = await finished(
    technician,
    {
      dutId: crystal.id,
      checkpointId: checkpoints[0],
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 1,
      referenceId: 1,
    },
    Array.from({ length: 600 }, () => crystal.nominal * (1 + 1e-9 * g())),
  );

  // The accelerometer's X axis: up reads 1000·(1 + s) + offset mg, down −1000·(1 + s) + offset
  // (the flip-pair model: common practice, no source). Its offset moves from +4 to +44 mg after
  // the wash, 40 mg against the seed's ±20 mg: exceeds; the sensitivity (+0.3 %) stays.
  const noise = gaussian(12);
  const linkProfile = { ...linkPreset('spi-bridge'), queryCommand: SPI_AXIS_QUERY.x };
  for (const [cp, offset] of [
    [checkpoints[0], 4],
    [checkpoints[1], 44],
  ] as const) {
    const pose = async (orientation: string, g: number) =>
      finished(
        technician,
        {
          dutId: accel.id,
          checkpointId: cp,
          quantity: 'acceleration',
          unit: 'mg',
          gateTime: 0.1,
          orientation,
          linkProfile,
        },
        Array.from({ length: 200 }, () => 1000 * g * 1.003 + offset + 1.2 * noise()),
      );
    const up = await pose('x-up', 1);
    const down = await pose('x-down', -1);
    await technician.call('POST', `/api/duts/${accel.id}/tilt-checks`, {
      checkpointId: cp,
      axis: 'x',
      flatCaptureId: up,
      invertedCaptureId: down,
    });
  }
  return { checkpoints, crystalId: crystal.id, crystalCaptureId };
}
