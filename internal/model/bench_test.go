package model

import "testing"

// 1M rows × 12 features (recency plus 11 others, one 10% missing →
// 13 standardized columns with its indicator); labels from a known
// logistic model. Frame generation is outside the timed loop.

func BenchmarkTrainLogistic1Mx12(b *testing.B) {
	f := synthetic(b, 1_000_000, 12, 1)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		m, err := TrainLogistic(f, f.Names(), LogisticOptions{C: 1})
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(m.Logistic.Iterations), "newton-steps")
	}
}

func BenchmarkPredictLogisticIsotonic1Mx12(b *testing.B) {
	train := synthetic(b, 200_000, 12, 1)
	m, err := TrainLogistic(train, train.Names(), LogisticOptions{C: 1})
	if err != nil {
		b.Fatal(err)
	}
	if err := m.Calibrate(CalibrationIsotonic, synthetic(b, 200_000, 12, 2)); err != nil {
		b.Fatal(err)
	}
	f := synthetic(b, 1_000_000, 12, 3)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := m.Predict(f); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFitCalibration1M(b *testing.B) {
	f := synthetic(b, 1_000_000, 2, 4)
	scores, _ := f.Col("recency_days")
	for _, kind := range []CalibrationKind{CalibrationPlatt, CalibrationIsotonic} {
		b.Run(string(kind), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := FitCalibration(kind, scores, f.Labels()); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
