"""Top-level URLs: the register's pages, sign-in, the admin (the LSO's back office), the API and
the health check.

The page URLs are a contract (issue 10): tools link to them.
"""
from __future__ import annotations

from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

from registry.views import health, home, imports, incidents, lasers, people, places, review

urlpatterns = [
    path("", home.home, name="home"),
    path("login/", auth_views.LoginView.as_view(template_name="pages/login.html", redirect_authenticated_user=True),
         name="login"),
    path("logout/", auth_views.LogoutView.as_view(), name="logout"),
    path("lasers/", lasers.register, name="register"),
    path("lasers/export.csv", lasers.register_csv, name="register-csv"),
    path("lasers/export.xlsx", lasers.register_xlsx_export, name="register-xlsx"),
    path("lasers/new/", lasers.laser_new, name="laser-new"),
    path("lasers/import/", imports.laser_import_upload, name="laser-import"),
    path("lasers/import/confirm/", imports.laser_import_confirmation, name="laser-import-confirm"),
    path("lasers/<int:pk>/", lasers.laser_detail, name="laser"),
    path("lasers/<int:pk>/resubmit/", lasers.laser_resubmit, name="laser-resubmit"),
    path("lasers/<int:pk>/emissions/<int:emission_pk>/mpe.svg", lasers.mpe_chart, name="chart-mpe"),
    path("lasers/<int:pk>/emissions/<int:emission_pk>/distance.svg", lasers.distance_chart, name="chart-distance"),
    path("review/", review.review_queue, name="review"),
    path("review/<int:pk>/", review.review_decide, name="review-decide"),
    path("locations/", places.location_list, name="locations"),
    path("locations/<int:pk>/", places.location_detail, name="location"),
    path("people/", people.people_list, name="people"),
    path("people/new/", people.person_new, name="person-new"),
    path("people/<int:pk>/", people.person_detail, name="person"),
    path("people/<int:pk>/training/", people.person_training, name="person-training"),
    path("people/<int:pk>/authorizations/", people.person_request_authorization, name="person-authorization"),
    path("authorizations/<int:pk>/decision/", people.authorization_decide, name="authorization-decide"),
    path("incidents/new/", incidents.incident_new, name="incident-new"),
    path("healthz", health.healthz, name="healthz"),
    path("admin/", admin.site.urls),
    path("api/v1/", include("registry.api.urls", namespace="api")),
]
