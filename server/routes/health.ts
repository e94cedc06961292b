import { Router } from 'express';
import { SOFTWARE } from '../software.js';

export const healthRouter = Router();

healthRouter.get('/health', (_req, res) => {
  res.json({ status: 'ok', software: SOFTWARE });
});
