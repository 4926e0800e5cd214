/**
 * Driftbench's glossary: one word per concept, used the same way on every page. The help page
 * shows it; a new word in the product belongs here first. Written for Driftbench, in its own words.
 */
export interface GlossaryTerm {
  term: string;
  /** Other spellings a reader may search for. */
  aka?: string[];
  text: string;
}

export interface GlossarySection {
  id: string;
  title: string;
  terms: GlossaryTerm[];
}

export const GLOSSARY: GlossarySection[] = [
  {
    id: 'studies',
    title: 'Studies and their plan',
    terms: [
      {
        term: 'Study',
        text: 'One question about one process: did this process change these parts? A study holds checkpoints, DUTs and their captures, and ends with a review.',
      },
      {
        term: 'Checkpoint',
        text: 'A moment in the study at which every DUT is captured. Checkpoints are numbered from 1 in the order the plan lists them.',
      },
      {
        term: 'Baseline',
        text: 'The first checkpoint (no. 1): the state before any exposure. Every later capture of a DUT is compared with its baseline capture.',
      },
      {
        term: 'Exposure',
        text: 'What happened to the parts before a checkpoint: one process of a named kind, with the figures that kind needs — a wash’s bath and minutes per side, a reflow’s peak temperature and passes, a bake’s temperature and hours, and so on.',
      },
      {
        term: 'Process kind',
        aka: ['wash', 'reflow', 'bake', 'thermal cycling', 'conformal coat', 'vibration', 'shock'],
        text: 'What sort of exposure a checkpoint follows: wash (ultrasonic or aqueous), reflow, bake, thermal cycling, conformal coat, vibration or shock, or other. The cautions and the notes on how each kind of part takes it follow the kind.',
      },
      {
        term: 'Archived',
        text: 'A study, checkpoint or DUT kept with all its captures and record but taken out of the matrix and the bench. Anything that holds captures is archived rather than deleted.',
      },
      {
        term: 'Excluded capture',
        text: 'A capture a lead has left out of the evidence, with the reason. Its readings and seal stay; it no longer stands for its cell in the matrix or the report. A lead can include it again.',
      },
      {
        term: 'Cell capture',
        aka: ['representative capture'],
        text: 'The capture that stands for one DUT at one checkpoint in the matrix: the latest finished one that is not excluded, unless a lead has chosen another.',
      },
      {
        term: 'DUT',
        aka: ['device under test', 'part'],
        text: 'One part on the board that is measured, with its nominal value and its limit.',
      },
      {
        term: 'Limit',
        text: 'How far a DUT may move between its baseline and a later checkpoint, ±L (or a lower and an upper bound) in ppm, ppb or the DUT’s unit.',
      },
      {
        term: 'Simulated captures',
        text: 'Whether a study accepts captures from a simulator. Off unless a planner turns it on (demo and training studies); such captures carry the “simulated” mark everywhere.',
      },
    ],
  },
  {
    id: 'bench',
    title: 'On the bench',
    terms: [
      {
        term: 'Bench',
        text: 'The page where a technician starts a capture and watches it: what (study › checkpoint › DUT), with what (instrument, reference, link) and how (gate time, ambient, target).',
      },
      {
        term: 'Capture',
        text: 'One recording of one DUT at one checkpoint: its readings and the conditions it ran under. Open while recording, then finished (its readings never change) or aborted.',
      },
      {
        term: 'Reading',
        text: 'One value from the instrument with its sequence number and its time since the capture started.',
      },
      {
        term: 'Flagged reading',
        aka: ['garbled line', 'timeout'],
        text: 'A reading the link could not take cleanly (a garbled line, a timeout, an implausible value). It is stored and counted, but left out of the statistics.',
      },
      {
        term: 'Outlier',
        text: 'A reading far from its neighbours (modified z-score above 5). Stored, counted and left out of the statistics, like a flagged reading.',
      },
      {
        term: 'Gap',
        text: 'Time with no readings at all (the link dropped). A gap is reported with its length; it is not a flagged reading.',
      },
      {
        term: 'Link',
        text: 'How readings reach the browser: a serial port (Web Serial) or a simulator, read with a link profile.',
      },
      {
        term: 'Link profile',
        text: 'How to talk to an instrument: port settings, line ending, talk-only or query mode, commands, and how to turn a reply into a number.',
      },
      {
        term: 'Simulated',
        text: 'Recorded from one of Driftbench’s simulated instruments rather than a real one. The mark is stored on the capture when it starts and shown on the capture, in lists, in the matrix and in the report.',
      },
      {
        term: 'Reference',
        text: 'The frequency standard that corrects the counter’s timebase: f_true = f_displayed · (1 + y_ref). Its offset is copied into the capture when it starts. The bench starts with the lab’s reference.',
      },
      {
        term: 'Ambient',
        text: 'The air temperature beside the board, read at the bench for every capture. Required: it enters the temperature term of the budget and the comparison of conditions.',
      },
      {
        term: 'Watch',
        text: 'Following an open capture from another screen, with its progress, the time left and a “stalled” mark when no reading has come for a while.',
      },
      {
        term: 'Replay',
        text: 'Playing a stored capture again through the live chart at 1×…1000×, with a seek bar.',
      },
    ],
  },
  {
    id: 'figures',
    title: 'Figures',
    terms: [
      {
        term: 'Nominal',
        text: 'The value a DUT should have (16 000 000 Hz). Frequencies are grouped by thousands.',
      },
      {
        term: 'Offset',
        text: 'The relative difference from nominal, with its sign, in ppm (10⁻⁶) or ppb (10⁻⁹).',
      },
      {
        term: 'Scientific notation',
        aka: ['e-12'],
        text: 'Small dimensionless numbers are written 2.0 × 10⁻¹², never 2.0e-12.',
      },
      {
        term: 'Gate time',
        aka: ['τ0'],
        text: 'How long the counter counts for one reading. τ0 = gate time + dead time is the spacing of readings.',
      },
      {
        term: 'Drift',
        text: 'The slope of a straight line through the readings, per day, given with its standard error in the same unit: +79.8 ppb/day ± 0.105 ppb/day.',
      },
      {
        term: 'σy(τ)',
        aka: ['Allan deviation', 'ADEV', 'OADEV'],
        text: 'The stability of the fractional frequency y over an averaging time τ. ADEV, OADEV (overlapping), MDEV, HDEV, TDEV (time, in s) and TOTDEV are its estimators.',
      },
      {
        term: 'EDF',
        text: 'Equivalent degrees of freedom of a stability point; it sets the width of the χ² confidence interval drawn as a ribbon.',
      },
      {
        term: 'Noise type',
        text: 'White PM, flicker PM, white FM, flicker FM and random-walk FM (written out, never abbreviated). A point is labelled only where the plotted slope agrees.',
      },
    ],
  },
  {
    id: 'verdicts',
    title: 'Uncertainty and verdicts',
    terms: [
      {
        term: 'Δ',
        text: 'The change: after − before, in the DUT’s unit and in ppm of its nominal.',
      },
      {
        term: 'u, U and k',
        text: 'u is a standard uncertainty; U = k·u_c is the expanded uncertainty, with the coverage factor k taken from the effective degrees of freedom ν_eff (about 95 % coverage).',
      },
      {
        term: 'Verdict',
        text: 'Within (Δ ± U lies inside the limit), exceeds (Δ ± U lies wholly outside) or inconclusive (a limit lies within Δ ± U). Always drawn as the limit-band glyph with its word.',
      },
      {
        term: 'Conditions differ',
        text: 'A note beside a verdict when the two captures were recorded differently: another reference or none, another gate time, instrument or orientation, ambient temperatures more than 2 °C apart, or one simulated and one real.',
      },
      {
        term: 'Calibration due',
        aka: ['overdue', 'due soon', 'calibration valid'],
        text: 'The date an instrument’s or a reference’s calibration runs out. More than 30 days away: “Calibration valid”; today up to the 30th day: “Due in N days”; past it: “Overdue by N days” — the bench still lets you capture, with a warning. Recording the new certificate on its page clears it.',
      },
      {
        term: 'Away for calibration',
        aka: ['away', 'sent for calibration'],
        text: 'Sent to a calibration laboratory and not back yet, whatever its due date says. The bench warns anyone who picks it; recording its new calibration brings it back.',
      },
      {
        term: 'Calibration record',
        aka: ['certificate', 'calibration history'],
        text: 'One calibration as its certificate states it: date, next due date, certificate number, issuing laboratory and stated uncertainty (for a reference, the offset found and its uncertainty). Records are never changed; a correction is a new record.',
      },
      {
        term: 'Lab reference',
        aka: ['lab’s reference'],
        text: 'The frequency reference the bench offers first. One at a time; a lead or an admin chooses it on the reference’s page.',
      },
    ],
  },
  {
    id: 'roles',
    title: 'Roles',
    terms: [
      { term: 'Admin', text: 'Manages people and the lab’s equipment.' },
      { term: 'Lead', text: 'Plans studies, reviews and approves them.' },
      { term: 'Engineer', text: 'Plans studies and captures.' },
      { term: 'Technician', text: 'Captures on the bench and writes notes.' },
      {
        term: 'Viewer',
        text: 'Reads everything, changes nothing and sends nothing to an instrument.',
      },
    ],
  },
];
