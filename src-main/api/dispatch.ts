// One place where a method name and an untrusted payload become a service call: validated against the
// schema in api/contract.ts, errors turned into plain ApiError values. The IPC handler and the browser host both use it.
import { ApiValidationError, isApiMethod, parseParams, toApiError, type ApiResponse, type ApiService } from './contract.ts';

export type DispatchOutcome = { status: 'ok' | 'bad-request' | 'unknown-method' | 'failed'; response: ApiResponse<unknown> };

export async function dispatch(service: ApiService, method: string, payload: unknown): Promise<DispatchOutcome> {
  if (!isApiMethod(method)) {
    return { status: 'unknown-method', response: { ok: false, error: { name: 'ApiValidationError', message: `unknown API method "${method}"` } } };
  }
  let params: unknown;
  try {
    params = parseParams(method, payload);
  } catch (e) {
    return { status: 'bad-request', response: { ok: false, error: toApiError(e) } };
  }
  try {
    const fn = service[method] as (p: unknown) => Promise<unknown>;
    const value = await fn.call(service, params);
    return { status: 'ok', response: { ok: true, value } };
  } catch (e) {
    return { status: e instanceof ApiValidationError ? 'bad-request' : 'failed', response: { ok: false, error: toApiError(e) } };
  }
}
