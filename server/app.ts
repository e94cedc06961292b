import { randomUUID } from 'node:crypto';
import path from 'node:path';
import express from 'express';
import helmet from 'helmet';
import { pinoHttp } from 'pino-http';
import { authenticate } from './auth/middleware.js';
import type { Services } from './context.js';
import { errorHandler, notFound, sendError } from './errors.js';
import { analysesRouter } from './routes/analyses.js';
import { authRouter } from './routes/auth.js';
import { baselinesRouter } from './routes/baselines.js';
import { healthRouter } from './routes/health.js';
import { peopleRouter } from './routes/people.js';
import { pulsarsRouter } from './routes/pulsars.js';
import { rfiRouter } from './routes/rfi.js';
import { runsRouter } from './routes/runs.js';
import { uploadsRouter } from './routes/uploads.js';

export interface AppOptions {
  /** Folder holding the built web app (vite build output: index.html + assets/). */
  webDir: string;
  services: Services;
  /** Express `trust proxy` (e.g. 1 behind one reverse proxy); off by default */
  trustProxy?: boolean | number | string;
}

export function createApp({ webDir, services: s, trustProxy }: AppOptions): express.Express {
  const app = express();
  app.disable('x-powered-by');
  app.set('trust proxy', trustProxy ?? false);
  app.use(
    helmet({
      // plain http on a lab network is normal for this app; do not force https on the browser
      strictTransportSecurity: s.publicUrl.startsWith('https:'),
      // nobody frames the app (the same rule as frame-ancestors 'none', for older browsers)
      xFrameOptions: { action: 'deny' },
      // Every directive spelled out (helmet's defaults off). The browser suite records every
      // violation on every screen and fails on any (tests/e2e/helpers.ts).
      contentSecurityPolicy: {
        useDefaults: false,
        directives: {
          defaultSrc: ["'self'"],
          // the built bundle only: no inline script, no eval, no script in attributes
          scriptSrc: ["'self'"],
          scriptSrcAttr: ["'none'"],
          // Tailwind's built CSS file; plus the two fixed <style> blocks the plot library
          // (@observablehq/plot 0.6.17, src/plot.js and src/legends/ramp.js, default class
          // plot-d6a7b5) puts into each figure and colour legend, allowed by their SHA-256 and
          // nothing else. A new version of the library that changes them shows up as a
          // violation in the browser suite, whose message gives the new hash.
          styleSrc: [
            "'self'",
            "'sha256-jSYQUrW7J0b3jPqhZP9C2Xh1PyJKHKXd4s0fpGGKrww='",
            "'sha256-/jg3HOQ97BIOLIR7iXhepLJanBbw11P39q1Ne1E+6Jc='",
          ],
          // style attributes in markup: none. React's style={…} and the plot library set
          // styles through the CSSOM (element.style), which CSP does not govern.
          styleSrcAttr: ["'none'"],
          // data: for the favicon placeholder (href="data:,") and the plot library's colour
          // ramp, which it draws on a canvas and embeds as a data: image
          imgSrc: ["'self'", 'data:'],
          // fontsource files are bundled into /assets
          fontSrc: ["'self'"],
          connectSrc: ["'self'"],
          objectSrc: ["'none'"],
          baseUri: ["'self'"],
          formAction: ["'self'"],
          frameAncestors: ["'none'"],
          upgradeInsecureRequests: s.publicUrl.startsWith('https:') ? [] : null,
        },
      },
    }),
  );
  app.use(
    '/api',
    pinoHttp({
      logger: s.logger,
      genReqId: (req, res) => {
        const given = req.headers['x-request-id'];
        const id = typeof given === 'string' && /^[\w.-]{1,64}$/.test(given) ? given : randomUUID();
        res.setHeader('X-Request-Id', id);
        return id;
      },
      customLogLevel: (_req, res, err) =>
        err || res.statusCode >= 500 ? 'error' : res.statusCode >= 400 ? 'warn' : 'info',
    }),
  );

  app.use('/api', healthRouter(s));
  // better-auth reads its own bodies: before express.json()
  app.use('/api', authRouter(s));
  app.use('/api', authenticate(s));
  // nobody unknown gets a large body read and parsed: state changes need a caller first
  app.use('/api', (req, res, next) => {
    if (!req.actor && !['GET', 'HEAD', 'OPTIONS'].includes(req.method))
      sendError(res, 401, 'unauthenticated', 'sign in or send an API token');
    else next();
  });
  app.use('/api', express.json({ limit: s.limits.jsonBytes }));
  app.use('/api', peopleRouter(s));
  app.use('/api', pulsarsRouter(s));
  app.use('/api', runsRouter(s));
  app.use('/api', baselinesRouter(s));
  app.use('/api', rfiRouter(s));
  app.use('/api', uploadsRouter(s));
  app.use('/api', analysesRouter(s));
  app.use('/api', notFound);
  app.use('/api', errorHandler);

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
