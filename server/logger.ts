import pino from 'pino'

/** Secrets that must never reach a log line: cookies, bearer tokens, passwords, one-time tokens. */
export const REDACT = [
  'req.headers.cookie',
  'req.headers.authorization',
  'res.headers["set-cookie"]',
  '*.password',
  '*.newPassword',
  '*.currentPassword',
  '*.token',
]

/** `destination`: where lines go instead of stdout (tests read them back). */
export function createLogger(level: string, pretty: boolean, destination?: pino.DestinationStream): pino.Logger {
  const options: pino.LoggerOptions = {
    level,
    redact: { paths: REDACT, censor: '[redacted]' },
    ...(pretty ? { transport: { target: 'pino-pretty', options: { translateTime: 'HH:MM:ss', ignore: 'pid,hostname,req,res,responseTime', singleLine: true } } } : {}),
  }
  return destination ? pino(options, destination) : pino(options)
}

/** A URL with every query value that looks like a credential replaced, for request logs. */
export function scrubUrl(url: string): string {
  return url.replace(/([?&](?:token|key|pass|code)=)[^&#]*/gi, '$1[redacted]')
}
