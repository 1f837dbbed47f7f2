import { redirect } from 'react-router'
import type { Route } from './+types/sign-out'
import { signOut } from '~/server/auth.server'

export async function loader() {
  throw redirect('/')
}

export async function action({ request, context }: Route.ActionArgs) {
  return signOut(request, context)
}
