import { Router } from 'express';
import { authorize } from '../middleware/auth.js';
import { listReferences } from '../services/lab.js';
import { listInstruments } from '../services/instruments.js';
import { dashboard } from '../services/dashboard.js';

export function labRouter(): Router {
  const r = Router();
  r.get('/instruments', authorize('read'), async (_req, res) => {
    res.json({ instruments: await listInstruments() });
  });
  r.get('/references', authorize('read'), async (_req, res) => {
    res.json({ references: await listReferences() });
  });
  r.get('/dashboard', authorize('read'), async (_req, res) => {
    res.json(await dashboard());
  });
  return r;
}
