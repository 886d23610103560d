// http_ece ships no types; tests/fakes/push.js uses only its decrypt().
declare module 'http_ece';
