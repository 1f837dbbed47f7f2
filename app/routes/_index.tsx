import { redirect } from 'react-router'
import type { Route } from './+types/_index'
import { getUser, ROLE_HOME } from '~/server/auth.server'

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await getUser(request, context)
  throw redirect(user ? ROLE_HOME[user.role] : '/sign-in')
}
