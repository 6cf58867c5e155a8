// supertest against the real listening server; every response is checked against the OpenAPI document.
import request, { type Test, type Response } from 'supertest';
import { assertConforms } from './openapi-check.ts';

export interface Client {
  get(path: string, key?: string): Promise<Response>;
  del(path: string, key?: string): Promise<Response>;
  put(path: string, body: unknown, key?: string): Promise<Response>;
  postJson(path: string, body: unknown, key?: string, headers?: Record<string, string>): Promise<Response>;
  upload(
    filePath: string,
    fields: Record<string, string>,
    key?: string,
    headers?: Record<string, string>,
  ): Promise<Response>;
  checked(test: Test): Promise<Response>;
}

export function client(baseUrl: string): Client {
  const auth = (test: Test, key?: string) => (key ? test.set('authorization', `Bearer ${key}`) : test);
  const checked = async (test: Test) => {
    const res = await test;
    assertConforms(res);
    return res;
  };
  return {
    checked,
    get: (path, key) => checked(auth(request(baseUrl).get(path), key)),
    del: (path, key) => checked(auth(request(baseUrl).delete(path), key)),
    put: (path, body, key) => checked(auth(request(baseUrl).put(path), key).send(body as object)),
    postJson: (path, body, key, headers = {}) =>
      checked(
        auth(request(baseUrl).post(path), key)
          .set(headers)
          .send(body as object),
      ),
    upload: (filePath, fields, key, headers = {}) => {
      let test = auth(request(baseUrl).post('/v1/jobs'), key).set(headers);
      for (const [name, value] of Object.entries(fields)) test = test.field(name, value);
      return checked(test.attach('file', filePath));
    },
  };
}
