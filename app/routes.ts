import type { RouteConfig } from '@react-router/dev/routes'
import { flatRoutes } from '@react-router/fs-routes'

// File-system routes (app/routes/*): a new screen or resource route is a new file, named by
// the framework's flat-routes convention (e.g. sessions.$sessionId.console.tsx).
export default flatRoutes() satisfies RouteConfig
