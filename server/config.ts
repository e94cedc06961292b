// The server's settings from command-line options and the environment (documented in README).
import type { StartOptions } from './start.js';

export const DEFAULT_PORT = 5180;

export interface ServeFlags {
  port?: number;
  host?: string;
  dataDir?: string;
}

export function configFromEnv(flags: ServeFlags, env = process.env): StartOptions {
  const port = flags.port ?? (env.PORT ? Number(env.PORT) : DEFAULT_PORT);
  if (!Number.isInteger(port) || port < 0 || port > 65535)
    throw new RangeError(`port "${env.PORT}" is not an integer from 0 to 65535`);
  const threads = env.SIGHTLINE_ANALYSIS_THREADS
    ? Number(env.SIGHTLINE_ANALYSIS_THREADS)
    : undefined;
  const uploadMb = env.SIGHTLINE_UPLOAD_MB ? Number(env.SIGHTLINE_UPLOAD_MB) : undefined;
  const signIns = env.SIGHTLINE_SIGN_IN_PER_MINUTE
    ? Number(env.SIGHTLINE_SIGN_IN_PER_MINUTE)
    : undefined;
  return {
    port,
    host: flags.host ?? env.HOST ?? '127.0.0.1',
    dataDir: flags.dataDir ?? env.SIGHTLINE_DATA_DIR ?? 'data',
    databaseUrl: env.DATABASE_URL || undefined,
    smtpUrl: env.SMTP_URL || undefined,
    mailFrom: env.SIGHTLINE_MAIL_FROM || undefined,
    publicUrl: env.SIGHTLINE_PUBLIC_URL || undefined,
    trustedOrigins: env.SIGHTLINE_TRUSTED_ORIGINS?.split(',').filter(Boolean),
    webDir: env.SIGHTLINE_WEB_DIR || undefined,
    trustProxy: env.SIGHTLINE_TRUST_PROXY
      ? Number(env.SIGHTLINE_TRUST_PROXY) || env.SIGHTLINE_TRUST_PROXY
      : undefined,
    analysisThreads: threads,
    inProcessWorker: !/^(0|false|no|off)$/i.test(env.SIGHTLINE_IN_PROCESS_WORKER ?? ''),
    uploadBytes: uploadMb ? uploadMb * 1024 * 1024 : undefined,
    signInPerMinute: signIns && signIns > 0 ? signIns : undefined,
  };
}
