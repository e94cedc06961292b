import express from 'express';
import path from 'node:path';
import { errorHandler, notFound, sendError } from './errors.js';
import { healthRouter } from './routes/health.js';

export interface AppOptions {
  /** Folder holding the built web app (vite build output: index.html + assets/). */
  webDir: string;
}

export function createApp({ webDir }: AppOptions): express.Express {
  const app = express();
  app.disable('x-powered-by');

  app.use('/api', healthRouter);
  app.use('/api', notFound);

  // Hashed bundles never change; a missing one is a 404, not the app shell.
  app.use(
    '/assets',
    express.static(path.join(webDir, 'assets'), {
      immutable: true,
      maxAge: '1y',
      fallthrough: false,
    }),
  );
  app.use(express.static(webDir, { index: false }));

  // Client-side routes: every other GET gets the app shell.
  const indexHtml = path.join(webDir, 'index.html');
  app.get('/{*path}', (_req, res, next) => {
    res.setHeader('Cache-Control', 'no-cache');
    res.sendFile(indexHtml, (err) => {
      if (!err) return;
      if ((err as NodeJS.ErrnoException).code === 'ENOENT')
        sendError(res, 503, 'web_not_built', `no web app in ${webDir}; run \`npm run build\``);
      else next(err);
    });
  });

  app.use(notFound);
  app.use(errorHandler);
  return app;
}
