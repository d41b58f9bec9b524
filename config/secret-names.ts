/**
 * Which config entries hold credentials, so no message or log line ever shows their values: Kafka
 * client properties such as `sasl.password`, `ssl.key.password`, `ssl.key.pem`,
 * `sasl.oauthbearer.client.secret`, and anything whose name says password, secret, token, credential,
 * private or JAAS. Names are matched case-insensitively, so the environment spelling
 * (`RARETIDE__KAFKA__SETTINGS__SASL_PASSWORD`) is caught as well as the file's.
 */
const SECRET_NAME = /(password|secret|token|credential|private|jaas|oauthbearer\.config|^ssl[._]key[._]pem$|^ssl_key$)/i;

/** What a secret value is shown as. */
export const REDACTED = '[redacted]';

/** True when a property name or a config path segment names a credential. */
export function namesSecret(name: string): boolean {
  return SECRET_NAME.test(name);
}

/** True when any segment of a config path names a credential. */
export function pathHoldsSecret(path: readonly PropertyKey[]): boolean {
  return path.some((segment) => typeof segment === 'string' && namesSecret(segment));
}
