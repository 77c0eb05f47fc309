from django.urls import path

from fleetcare.planner import views

app_name = "planner"
urlpatterns = [
    path("", views.home, name="home"),
    path("feed/<str:token>.ics", views.feed, name="feed"),
    path("battery/<int:pk>/equalizing/", views.equalizing, name="equalizing"),
    path("battery/<int:pk>/equalizing/reading/", views.equalizing_reading, name="equalizing_reading"),
    path("battery/<int:pk>/equalizing/end/", views.equalizing_end, name="equalizing_end"),
    path("<slug:code>/today/", views.today, name="today"),
    path("<slug:code>/skip/", views.skip, name="skip"),
    path("<slug:code>/week/", views.plan, name="plan"),
    path("<slug:code>/plan.ics", views.plan_ics, name="plan_ics"),
    path("<slug:code>/feed-token/", views.new_feed_token, name="new_feed_token"),
]
