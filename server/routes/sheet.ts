import { SceneParams, SheetCsvQuery, SheetQuery } from '@shared/schemas'
import { sheetCsv, sheetOf, sheetScansCsv } from '../services/sheet'
import { defineRoute, type RouteDef } from './registry'

export const sheetRoutes: RouteDef[] = [
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/sheet',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    query: SheetQuery,
    handler: async ({ services, params, query }) => ({ body: { sheet: await sheetOf(services, params.sceneId, query.checkpoint) } }),
  }),
  defineRoute({
    method: 'get',
    path: '/scenes/:sceneId/sheet.csv',
    access: { kind: 'project', right: 'view' },
    params: SceneParams,
    query: SheetCsvQuery,
    handler: async ({ services, params, query, res }) => {
      const sheet = await sheetOf(services, params.sceneId, query.checkpoint)
      const name = `${sheet.scene.name}${sheet.checkpoint ? ` - ${sheet.checkpoint.name}` : ''}${query.table === 'scans' ? ' - scans' : ''}`.replace(/[^\w .-]+/g, '_').slice(0, 80)
      res.setHeader('Content-Disposition', `attachment; filename="${name}.csv"`)
      res.status(200).type('text/csv; charset=utf-8').send(query.table === 'scans' ? sheetScansCsv(sheet) : sheetCsv(sheet))
    },
  }),
]
