import type { FastifyPluginAsyncZod } from 'fastify-type-provider-zod';
import { z } from 'zod';

/**
 * Dashboard links the alert job writes into evidence and notifications
 * ("/machines/<slug>?from=...&to=..."): they open the machine page on that range. No database
 * access here; the page resolves the slug through the API, which asks for sign-in when needed.
 */
export const linkRoutes: FastifyPluginAsyncZod = async (app) => {
  app.get(
    '/machines/:slug',
    {
      schema: {
        hide: true,
        params: z.object({ slug: z.string().min(1).max(200) }),
        querystring: z.object({
          from: z.string().max(40).optional(),
          to: z.string().max(40).optional(),
          site: z.string().max(200).optional(),
        }),
      },
    },
    async (request, reply) => {
      const q = new URLSearchParams({ slug: request.params.slug });
      for (const key of ['site', 'from', 'to'] as const) {
        const v = request.query[key];
        if (v !== undefined) q.set(key, v);
      }
      return reply.redirect(`/machine.html?${q}`, 302);
    },
  );
};
