// Sign-in, sessions, roles and API tokens through better-auth: e-mail + password (its own
// password hashing), sessions in http-only SameSite cookies, the admin plugin for users and
// roles, and the api-key plugin for robot tokens (only a hash of each key is stored).
import { TOKEN_DAYS, TOKEN_SCOPES } from '../../shared/schemas/api.js';
import { apiKey } from '@better-auth/api-key';
import { drizzleAdapter } from '@better-auth/drizzle-adapter';
import { betterAuth } from 'better-auth';
import { admin } from 'better-auth/plugins';
import type { Db } from '../db/client.js';
import { account, apikey, session, user, verification } from '../db/schema.js';

export interface AuthOptions {
  db: Db;
  /** public URL of the server, e.g. http://127.0.0.1:5180 */
  baseURL: string;
  /** signs session cookies; at least 32 characters */
  secret: string;
  /** other origins allowed to call the API with cookies (e.g. the Vite dev server) */
  trustedOrigins?: string[];
  /** minimum password length for new accounts */
  minPasswordLength?: number;
  /** where better-auth's own messages go (the server's pino logger) */
  log?: (level: 'debug' | 'info' | 'warn' | 'error', message: string) => void;
  /** called after every successful sign-in (a new session), for the audit trail */
  onSignIn?: (session: {
    userId: string;
    ipAddress?: string | null;
    userAgent?: string | null;
  }) => Promise<void>;
}

/** Robot tokens look like `sl_…` so they are easy to spot in logs and secret scanners. */
export const TOKEN_PREFIX = 'sl_';

export function createAuth(o: AuthOptions) {
  return betterAuth({
    appName: 'Sightline',
    // refused tokens and passwords are normal traffic: they reach the log as warnings at most
    logger: {
      level: 'warn',
      log: (level, message) =>
        o.log?.(level === 'error' && /API key|password/i.test(message) ? 'warn' : level, message),
    },
    baseURL: o.baseURL,
    basePath: '/api/auth',
    secret: o.secret,
    trustedOrigins: [o.baseURL, ...(o.trustedOrigins ?? [])],
    database: drizzleAdapter(o.db, {
      provider: 'pg',
      schema: { user, session, account, verification, apikey },
    }),
    emailAndPassword: {
      enabled: true,
      // accounts are created by an admin (or the demo set-up), never by open sign-up
      disableSignUp: true,
      minPasswordLength: o.minPasswordLength ?? 10,
    },
    session: {
      expiresIn: 60 * 60 * 24 * 7,
      updateAge: 60 * 60 * 24,
    },
    databaseHooks: {
      session: {
        create: {
          after: async (session) => {
            await o.onSignIn?.(session);
          },
        },
      },
    },
    // sign-in attempts are limited by the Express layer (express-rate-limit), per address
    rateLimit: { enabled: false },
    advanced: {
      cookiePrefix: 'sightline',
      defaultCookieAttributes: { httpOnly: true, sameSite: 'lax' },
      ipAddress: { ipAddressHeaders: ['x-forwarded-for'] },
    },
    plugins: [
      admin({ defaultRole: 'viewer', adminRoles: ['admin'] }),
      apiKey({
        defaultPrefix: TOKEN_PREFIX,
        requireName: true,
        maximumNameLength: 64,
        // the Express layer limits requests; a CI job may push hundreds of results in a row
        rateLimit: { enabled: false },
        // every token expires (a year unless asked otherwise, at most two years); scopes are
        // better-auth permissions { sightline: [...] } (server/auth/middleware.ts enforces them)
        keyExpiration: {
          defaultExpiresIn: TOKEN_DAYS.default * 86_400, // seconds (min/max are days)
          minExpiresIn: TOKEN_DAYS.min,
          maxExpiresIn: TOKEN_DAYS.max,
        },
        permissions: { defaultPermissions: { sightline: [...TOKEN_SCOPES] } },
      }),
    ],
  });
}

export type Auth = ReturnType<typeof createAuth>;
