from django.urls import path

from projectapp.reviews import views

urlpatterns = [
    path("products/<int:product_id>/draft/submit/", views.draft_submit, name="draft_submit"),
    path("reviews/", views.dashboard, name="review_dashboard"),
    path("reviews/items/<int:item_id>/", views.item_detail, name="review_item"),
    path("reviews/items/<int:item_id>/decide/", views.item_decide, name="review_item_decide"),
    path("reviews/items/<int:item_id>/assign/", views.item_assign, name="review_item_assign"),
    path("reviews/items/<int:item_id>/confirm/", views.item_confirm, name="review_item_confirm"),
    path("reviews/items/<int:item_id>/evidence/", views.evidence_upload, name="evidence_upload"),
    path("reviews/evidence/<int:attachment_id>/", views.evidence_download, name="evidence_download"),
    path("reviews/steps/<int:step_id>/", views.step_update, name="process_step_update"),
    path("reviews/items/<int:item_id>/comment/", views.item_comment, name="review_item_comment"),
    path("products/<int:product_id>/revisions/<int:number>/review/", views.revision_review, name="revision_review"),
    path("products/<int:product_id>/audit/", views.product_audit, name="product_audit"),
    path("teams/<int:team_id>/reviewers/", views.team_reviewers, name="team_reviewers"),
    path("products/<int:product_id>/compare/", views.revision_compare, name="revision_compare"),
]
