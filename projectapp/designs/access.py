"""Fetching products and revisions for a person: another team's product is a 404, never a leak."""

from django.shortcuts import get_object_or_404

from projectapp.designs.models import Product, Revision
from projectapp.teams.access import teams_of


def products_for(user):
    return Product.objects.filter(team__in=teams_of(user)).select_related("team")


def get_product_for_user(user, product_id: int) -> Product:
    return get_object_or_404(products_for(user), pk=product_id)


def get_revision_for_user(user, product_id: int, number: int) -> Revision:
    product = get_product_for_user(user, product_id)
    return get_object_or_404(Revision.objects.select_related("product__team"), product=product, number=number)
